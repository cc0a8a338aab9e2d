"""Rigid linear molecules: the pair kernel against a plain C loop, and Monte Carlo moves/s.

Nitrogen as configs/nitrogen.toml has it (two Lennard-Jones sites and a
point quadrupole), N = 4000 molecules, molecular cut-off 5 sigma, at two
states: the gas at 300 K and 100 bar (rho* = 0.088, T* = 8.6) and a
liquid-like density (rho* = 0.64, T* = 2.2, about the liquid at 77 K).
Figures: ns per site pair of the force kernel
(:func:`mdsim.engine.rigid_pair.forces_half`, 1 thread; a molecule pair
inside the cut-off counts as its 4 site pairs), the same work done by a
plain C loop compiled here with ``cc -O2`` on the same configuration and
neighbour list (the target: the numba kernel within 1.5 times the C loop),
Monte Carlo trial moves per second (:class:`RigidMCSampler`) and molecular
dynamics steps per second (:class:`RigidMDSampler`, shifted-energy model,
NVE from the Monte Carlo configuration).

Run ``python -m mdsim.bench.rigid`` (``--quick`` for short runs).  Timings
on a shared machine are noisy; the figures are a guide, not a test.
"""
import ctypes
import shutil
import subprocess
import sys
import tempfile
import time
import timeit
from pathlib import Path

import numpy as np

from analysis.molecules.reduced import reduced_linear_type
from mdsim.engine.neighbours import NeighbourList
from mdsim.engine.rigid_mc import RigidMCSampler, lattice_start
from mdsim.engine.rigid_md import RigidMDSampler
from mdsim.engine.rigid_model import LinearPairModel
from mdsim.sampling.rigid_box import reduced_inertia
from mdsim.study.reader import read_study

CONFIG = Path(__file__).resolve().parents[2] / "configs" / "nitrogen.toml"
STATES = {"gas": (0.088, 300.0 / 34.897), "liquid-like": (0.64, 2.2)}
N_MOLECULES, CUTOFF = 4000, 5.0
TARGET_RATIO = 1.5

C_SOURCE = r"""
#include <math.h>
double site_forces(int n, const double *c, const double *e, const int *nb, const int *cnt,
                   int width, const double *box, double rc, int ns, const double *z,
                   const double *eps, const double *sig, double qq, double *f, double *t,
                   long *n_pairs)
{
    double u = 0.0, rc2 = rc * rc;
    long np = 0;
    for (int i = 0; i < 3 * n; i++) { f[i] = 0.0; t[i] = 0.0; }
    for (int i = 0; i < n; i++) {
        const double *a = e + 3 * i;
        for (int k = 0; k < cnt[i]; k++) {
            int j = nb[i * width + k];
            const double *b = e + 3 * j;
            double d[3];
            for (int x = 0; x < 3; x++) {
                d[x] = c[3 * j + x] - c[3 * i + x];
                d[x] -= box[x] * rint(d[x] / box[x]);
            }
            double r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
            if (r2 >= rc2) continue;
            np++;
            double F[3] = {0, 0, 0}, ta[3] = {0, 0, 0}, tb[3] = {0, 0, 0};
            for (int p = 0; p < ns; p++) for (int q = 0; q < ns; q++) {
                double s[3];
                for (int x = 0; x < 3; x++) s[x] = d[x] + z[q] * b[x] - z[p] * a[x];
                double inv2 = 1.0 / (s[0] * s[0] + s[1] * s[1] + s[2] * s[2]);
                double sg = sig[p * ns + q], ep = eps[p * ns + q];
                double s6 = sg * sg * inv2; s6 = s6 * s6 * s6;
                u += 4.0 * ep * (s6 * s6 - s6);
                double fr = 24.0 * ep * (2.0 * s6 * s6 - s6) * inv2;
                double g[3] = {fr * s[0], fr * s[1], fr * s[2]};
                for (int x = 0; x < 3; x++) F[x] += g[x];
                tb[0] += z[q] * (b[1] * g[2] - b[2] * g[1]);
                tb[1] += z[q] * (b[2] * g[0] - b[0] * g[2]);
                tb[2] += z[q] * (b[0] * g[1] - b[1] * g[0]);
                ta[0] -= z[p] * (a[1] * g[2] - a[2] * g[1]);
                ta[1] -= z[p] * (a[2] * g[0] - a[0] * g[2]);
                ta[2] -= z[p] * (a[0] * g[1] - a[1] * g[0]);
            }
            if (qq != 0.0) {
                double r = sqrt(r2), ir = 1.0 / r, n3[3] = {d[0] * ir, d[1] * ir, d[2] * ir};
                double ca = a[0] * n3[0] + a[1] * n3[1] + a[2] * n3[2];
                double cb = b[0] * n3[0] + b[1] * n3[1] + b[2] * n3[2];
                double g = a[0] * b[0] + a[1] * b[1] + a[2] * b[2] - 5.0 * ca * cb;
                double pre = qq * ir * ir * ir * ir * ir;
                double ang = 1.0 - 5.0 * ca * ca - 5.0 * cb * cb - 15.0 * ca * ca * cb * cb
                             + 2.0 * g * g;
                u += pre * ang;
                double dca = -10.0 * ca - 30.0 * ca * cb * cb - 20.0 * g * cb;
                double dcb = -10.0 * cb - 30.0 * ca * ca * cb - 20.0 * g * ca;
                double gn = pre * ir * (-5.0 * ang - dca * ca - dcb * cb), ga[3], gb[3];
                for (int x = 0; x < 3; x++) {
                    F[x] -= gn * n3[x] + pre * ir * (dca * a[x] + dcb * b[x]);
                    ga[x] = pre * (dca * n3[x] + 4.0 * g * b[x]);
                    gb[x] = pre * (dcb * n3[x] + 4.0 * g * a[x]);
                }
                ta[0] -= a[1] * ga[2] - a[2] * ga[1];
                ta[1] -= a[2] * ga[0] - a[0] * ga[2];
                ta[2] -= a[0] * ga[1] - a[1] * ga[0];
                tb[0] -= b[1] * gb[2] - b[2] * gb[1];
                tb[1] -= b[2] * gb[0] - b[0] * gb[2];
                tb[2] -= b[0] * gb[1] - b[1] * gb[0];
            }
            for (int x = 0; x < 3; x++) {
                f[3 * j + x] += F[x]; f[3 * i + x] -= F[x];
                t[3 * i + x] += ta[x]; t[3 * j + x] += tb[x];
            }
        }
    }
    *n_pairs = np;
    return u;
}
"""


def _c_loop(workdir):
    """The C loop as a ctypes function, or None when no C compiler is found."""
    cc = shutil.which("cc") or shutil.which("gcc")
    if cc is None:
        return None
    src, lib = Path(workdir) / "site_forces.c", Path(workdir) / "site_forces.so"
    src.write_text(C_SOURCE)
    subprocess.run([cc, "-O2", "-shared", "-fPIC", str(src), "-o", str(lib), "-lm"], check=True)
    fn = ctypes.CDLL(str(lib)).site_forces
    fn.restype = ctypes.c_double
    return fn


def _ptr(a, kind=ctypes.c_double):
    return a.ctypes.data_as(ctypes.POINTER(kind))


def _state(model, density, seed=1):
    box = np.full(3, (N_MOLECULES / density) ** (1.0 / 3.0))
    centre, axis = lattice_start(N_MOLECULES, box, seed)
    return box, centre, axis


def _best(fn, repeat):
    """Shortest of ``repeat`` timings of one call, s."""
    return min(timeit.repeat(fn, number=1, repeat=repeat))


def _md_row(name, model, mc, temperature, inertia, quick):
    """MD steps per second from the Monte Carlo configuration (shifted-energy model)."""
    md = RigidMDSampler(model, mc.centre_ni, mc.axis_ni, mc.box_i, mass_t=[1.0],
                        inertia_t=[inertia], temperature=temperature, seed=1, method="md-nve")
    md.run(1, 2)  # a first call that includes the list build
    steps = 5 if quick else 50
    t0 = time.perf_counter()
    md.run(1, steps)
    return (f"rigid N2 {name} N={md.n}: MD steps (NVE, dt = {md.time_step:.2g}), 1 thread",
            steps / (time.perf_counter() - t0), "steps/s", "")


def _kernel_rows(name, model, density, temperature, c_fn, quick, md_model, inertia):
    box, centre, axis = _state(model, density)
    n = N_MOLECULES
    types = np.zeros(n, dtype=np.int64)
    mc = RigidMCSampler(model, centre, axis, types, box, temperature=temperature, seed=1)
    mc.equilibrate(2 if quick else 10)  # tunes the steps and loosens the lattice
    t0 = time.perf_counter()
    sweeps = 1 if quick else 5
    mc.equilibrate(sweeps)
    moves_per_s = sweeps * n / (time.perf_counter() - t0)
    nl = NeighbourList(n, box, model.rc, 0.3)
    order = nl.sort_order(mc.centre_ni)
    c, e = np.ascontiguousarray(mc.centre_ni[order]), np.ascontiguousarray(mc.axis_ni[order])
    nl.build(c)
    f, t = np.zeros((n, 3)), np.zeros((n, 3))
    u_numba = model.forces(c, e, types, box, nl.nb_nk, nl.count_n, f, t)[0]
    repeat = 3 if quick else 10
    sec = _best(lambda: model.forces(c, e, types, box, nl.nb_nk, nl.count_n, f, t), repeat)
    site_pairs = 4 * _pairs_inside(c, box, nl, model.rc)
    rows = [(f"rigid N2 {name} N={n}: force kernel, 1 thread", 1e9 * sec / site_pairs,
             "ns/site pair", f"<= {TARGET_RATIO} x C loop")]
    if c_fn is not None:
        z = np.ascontiguousarray(model.site_z_k)
        eps = np.ascontiguousarray(model.params_kk[:, :, 0])
        sig = np.ascontiguousarray(model.params_kk[:, :, 1])
        nb = np.ascontiguousarray(nl.nb_nk, dtype=np.int32)
        cnt = np.ascontiguousarray(nl.count_n, dtype=np.int32)
        n_pairs = ctypes.c_long(0)
        qq = 0.75 * float(model.elec_tm[0, 1]) ** 2
        fc, tc = np.zeros((n, 3)), np.zeros((n, 3))

        def run_c():
            return c_fn(n, _ptr(c), _ptr(e), _ptr(nb, ctypes.c_int), _ptr(cnt, ctypes.c_int),
                        nb.shape[1], _ptr(box), ctypes.c_double(model.rc), len(z), _ptr(z),
                        _ptr(eps), _ptr(sig), ctypes.c_double(qq), _ptr(fc), _ptr(tc),
                        ctypes.byref(n_pairs))
        u_c = run_c()
        if not np.isclose(u_c, u_numba, rtol=1e-9) or not np.allclose(fc, f, rtol=1e-7,
                                                                         atol=1e-9):
            raise RuntimeError(f"the C loop disagrees with the kernel: u {u_c} vs {u_numba}")
        sec_c = _best(run_c, repeat)
        rows.append((f"rigid N2 {name}: plain C loop (cc -O2), same list", 1e9 * sec_c /
                     site_pairs, "ns/site pair", ""))
        rows.append((f"rigid N2 {name}: numba kernel / C loop", sec / sec_c, "x",
                     f"<= {TARGET_RATIO}"))
    rows.append((f"rigid N2 {name} N={n}: MC trial moves (translation or rotation)", moves_per_s,
                 "moves/s", ""))
    rows.append(_md_row(name, md_model, mc, temperature, inertia, quick))
    return rows


def _pairs_inside(c, box, nl, rc):
    count = 0
    for i in range(len(c)):
        j = nl.nb_nk[i, :nl.count_n[i]]
        d = c[j] - c[i]
        d -= box * np.rint(d / box)
        count += int(np.count_nonzero((d * d).sum(axis=1) < rc * rc))
    return count


def bench_rows(quick=False):
    """Rows (label, value, unit, target) for the rigid N2 model at both states."""
    gas = read_study(CONFIG).gas
    mol = gas.molecules[0]
    site = mol.sites[0].potential
    kind = reduced_linear_type(mol, site.epsilon, site.sigma)
    model = LinearPairModel([kind], CUTOFF)
    md_model = LinearPairModel([kind], CUTOFF, shifted=True)
    inertia = reduced_inertia(mol, gas.units)
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        c_fn = _c_loop(tmp)
        for name, (density, temperature) in STATES.items():
            rows += _kernel_rows(name, model, density, temperature, c_fn, quick, md_model,
                                 inertia)
    return rows


def main(argv=None):
    argv = sys.argv[1:] if argv is None else argv
    for label, value, unit, target in bench_rows(quick="--quick" in argv):
        goal = f"   (target {target})" if target else ""
        print(f"{label:<72s} {value:10.3g} {unit}{goal}", flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
