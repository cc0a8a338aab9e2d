"""Feynman-Hibbs free expansions of helium, hydrogen and neon against their reference equations.

The study files' potentials (configs/helium.toml: LM2M2; configs/hydrogen.toml:
Silvera-Goldman, normal hydrogen; configs/neon.toml: HFD-B), quadratic Feynman-Hibbs
energy route, 295.15 K and the density of 100 bar, into twice the volume.  Helium warms
on this expansion, hydrogen and neon cool (facts of the trade; the reference equations
below say so).

References (test-only): CoolProp's helium EOS (Ortiz-Vega, Hall, Holste and
Hall, 2019), normal-hydrogen EOS (Leachman, Jacobsen, Penoncello and Lemmon,
J. Phys. Chem. Ref. Data 38, 721, 2009) and neon EOS (Katti, Jacobsen, Stewart
and Jahangiri 1986, from memory), ``Umolar`` at constant energy for Delta T,
``Bvirial`` for the reference B2.
"""
import math
import shutil
import warnings
from pathlib import Path

import pytest
from scipy.optimize import brentq

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
T_I, P_I, RATIO = 295.15, 100e5, 2.0

STUDY = """[study]
name = "{name}-fh"
[gas]
name = "{name}"
molar_mass = "{molar_mass} g/mol"
ideal_heat_capacity = "{cv}"
{quantum}
[potential]
form = "table"
table_file = "{table}"
cutoff = 3.0
[initial]
temperature = "{T} K"
density = "{rho} mol/m^3"
[expansion]
volume_ratio = {ratio}
[simulation]
routes = ["energy"]
quantum_potential = "feynman-hibbs"
particles = 128
target_stderr = "0.1 K"
max_cpu_time = "40 s"
seed = 7
"""

# name: CoolProp fluid, molar mass g/mol, c_v of the study, [gas] quantum keys (as in the
# study files), table (configs/)
EXACT = 'quantum = "exact"\nstatistics = "bose"\nnuclear_spin = "{}"'
GASES = {
    "helium": ("Helium", 4.002602, "1.5 R", EXACT.format("0"), "helium_lm2m2.csv"),
    "hydrogen": ("Hydrogen", 2.01588, "2.5 R", EXACT.format("normal-hydrogen"), "hydrogen_sg.csv"),
    "neon": ("Neon", 20.1797, "1.5 R", 'quantum = "second-order"', "neon_hfdb.csv"),
}


def _coolprop_delta_T(cp, fluid, rho_i):
    u_i = cp.PropsSI("Umolar", "T", T_I, "Dmolar", rho_i, fluid)
    return brentq(lambda t: cp.PropsSI("Umolar", "T", t, "Dmolar", rho_i / RATIO, fluid) - u_i,
                  T_I - 10.0, T_I + 10.0, xtol=1e-10) - T_I


def _model_and_allowances(gas, cv_model, cp, fluid, rho_i, dT_ref):
    """The potential's own B2 + B3 virial route (the study's quantum B2, quantum B3), K, and
    four allowances, K: (gap, b3, offset, cv), each stated below."""
    from analysis.expansion.virial_series import virial_expansion
    from analysis.virial_eos import VirialGas
    from mdsim.units import R_GAS
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the de Boer warning is expected for these gases
        first = VirialGas(gas.pairs_K_angstrom, [1.0], gas.molar_masses_kg_mol, quantum="first-order")
        exact = VirialGas(gas.pairs_K_angstrom, [1.0], gas.molar_masses_kg_mol,
                          quantum=gas.quantum,
                          spin=gas.spin_components() if gas.quantum == "exact" else None)
        dT3 = virial_expansion(exact, cv_model, T_I, RATIO, rho_i=rho_i, order=3).delta_T_K
        dT2 = virial_expansion(exact, cv_model, T_I, RATIO, rho_i=rho_i, order=2).delta_T_K
    # Delta T per unit error in dB2/dT (first order in the error, the B2 term of the balance)
    per_db = R_GAS * T_I ** 2 * (rho_i - rho_i / RATIO) / cv_model.cv(T_I)

    def b_ref(t):
        return cp.PropsSI("Bvirial", "T", t, "Dmolar", 1e-6, fluid)
    # gap: quadratic Feynman-Hibbs reproduces B2 to order hbar^2, i.e. B2 plus the first-order
    # Wigner-Kirkwood term (docs/physics.md 3.5); the study's B2 (exact, or second-order for
    # neon) minus first-order dB2/dT bounds
    # what it leaves out
    gap = per_db * abs(exact.dB_dT(T_I) - first.dB_dT(T_I))
    # b3: the whole B3 part of the virial route (bounds its quantum B3 and B4)
    b3 = abs(dT3 - dT2)
    # offset: the potential's known B2 error, its exact dB2/dT against the reference's
    offset = per_db * abs(exact.dB_dT(T_I) - (b_ref(T_I + 0.5) - b_ref(T_I - 0.5)))
    # cv: the study's constant ideal c_v against the reference's c_v0 at T_i
    cv0_ref = cp.PropsSI("Cp0molar", "T", T_I, "Dmolar", 1e-6, fluid) - R_GAS
    cv = abs(dT_ref) * abs(cv_model.cv(T_I) - cv0_ref) / cv0_ref
    return dT3, (gap, b3, offset, cv)


@pytest.mark.slow
@pytest.mark.parametrize("name", ["helium", "hydrogen", "neon"])
def test_feynman_hibbs_free_expansion_against_the_reference_equation_of_state(tmp_path, name):
    """Delta T of the energy route with the Feynman-Hibbs potential against CoolProp's.

    Against the same potential's B2 + B3 route (the study's quantum B2): 4 standard errors
    plus what Feynman-Hibbs leaves out (the study's minus first-order dB2/dT; helium
    0.003 K, hydrogen 0.007 K, neon 0.0002 K) and the B3 part (0.053, 0.069, 0.034 K).
    Against CoolProp: that plus the potential's known B2 offset, its dB2/dT against the
    reference's (helium LM2M2: within 0.5 %, 0.001 K; hydrogen Silvera-Goldman: 10 % low
    at 295 K, 0.13 K; neon HFD-B: 0.054 K) and the constant ideal c_v against the
    reference's c_v0 (hydrogen: 0.019 K).  The density is the reference's at 100 bar, so
    both sides start from one state.  Measured (seed 7, 128 particles, about 4 s of
    sampling each): helium +0.52 +- 0.07 K (CoolProp +0.521 K, the potential's virial
    route +0.517 K), hydrogen -1.11 +- 0.07 K (-1.323 K, -1.162 K), neon -2.28 +- 0.08 K
    (-2.290 K, -2.344 K).  At this error bar the test does not tell Feynman-Hibbs from a
    classical run (helium's classical dB2/dT would give about 0.15 K less); the
    dilute-limit tests of tests/mdsim/test_feynman_hibbs.py check the quantum term itself.
    """
    from analysis.heatcapacity import heat_capacity_from_spec
    from mdsim.pipeline import read_task_result
    from mdsim.pipeline.prepare import prepare_run_dir
    from mdsim.pipeline.runner import run_task
    from mdsim.study.reader import read_study
    cp = pytest.importorskip("CoolProp.CoolProp")
    fluid, molar_mass, cv, quantum, table = GASES[name]
    rho_i = cp.PropsSI("Dmolar", "T", T_I, "P", P_I, fluid)
    shutil.copy(CONFIGS / table, tmp_path / table)
    path = tmp_path / f"{name}.toml"
    path.write_text(STUDY.format(name=name, molar_mass=molar_mass, cv=cv, quantum=quantum, table=table,
                                 T=T_I, rho=f"{rho_i:.4f}", ratio=RATIO), encoding="utf-8")
    study = read_study(path)
    rd, _ = prepare_run_dir(study, tmp_path / "run")
    run_task(rd.path, 0)
    _, res, _ = read_task_result(rd.task_file(0))
    value, stderr = res["delta_T_K"]["value"], res["delta_T_K"]["stderr"]
    # the only warning allowed: a Newton step not below a quarter of the noise (no MBAR with
    # this potential, so the route rarely meets that test at a fixed budget; the value stands)
    assert all(w.startswith("energy route: the last Newton step") for w in res["warnings"])
    assert any("Feynman-Hibbs" in n for n in res["notes"])

    reference = _coolprop_delta_T(cp, fluid, rho_i)
    model, (gap, b3, offset, cv_part) = _model_and_allowances(
        study.gas, heat_capacity_from_spec(cv, "test"), cp, fluid, rho_i, reference)
    assert abs(value - model) < 4 * stderr + gap + b3, (value, stderr, model, gap, b3)
    allow = gap + b3 + offset + cv_part
    assert abs(value - reference) < 4 * stderr + allow, (value, stderr, reference, allow)
    # the sign the trade knows: helium warms, hydrogen and neon cool, well outside the error bar
    assert math.copysign(1.0, value) == (1.0 if name == "helium" else -1.0)
    assert abs(value) > 4 * stderr


def test_feynman_hibbs_over_a_table_matches_the_closed_form():
    """The light gases' potentials are tables: u_FH over a table of Lennard-Jones (0.002 sigma
    apart, like the configs' 0.01 angstrom) against u_FH over the closed form, and the
    table's tail integrals (Gauss-Legendre per spline piece) against the closed LJ forms
    (Allen and Tildesley, section 2.8).  The spline's u'' carries an error of order h^2
    (common practice, no source): 2e-4 relative or 1e-4 epsilon is allowed, tails to 1e-9."""
    import numpy as np
    from mdsim.engine import LennardJones
    from mdsim.engine.feynman_hibbs import FeynmanHibbs
    from mdsim.engine.tabulated import Tabulated
    lj = LennardJones(1.0, 1.0)
    r = np.arange(0.7, 8.0, 0.002)
    table = Tabulated(r, lj.energy(r))
    q, T, rc = 5e-3, 1.2, 3.0
    fh_table, fh_lj = FeynmanHibbs(table, q, T, rc), FeynmanHibbs(lj, q, T, rc)
    x = np.linspace(0.9, 2.9, 300)
    # measured: 7e-5 relative on the wall near 0.9 sigma, 4e-5 epsilon near the zero of u_FH
    assert fh_table.energy(x) == pytest.approx(fh_lj.energy(x), rel=2e-4, abs=1e-4)
    end = table.r_max  # the table's u is 0 beyond its last point
    closed = (4 * (rc ** -9 / 9 - rc ** -3 / 3) - 4 * (end ** -9 / 9 - end ** -3 / 3),
              4 * (-4 / 3 * rc ** -9 + 2 * rc ** -3) - 4 * (-4 / 3 * end ** -9 + 2 * end ** -3))
    assert table.tail_integrals(rc) == pytest.approx(closed, rel=1e-9)
    with pytest.raises(Exception, match="classical pair potential"):
        FeynmanHibbs(fh_lj, q, T, rc)
