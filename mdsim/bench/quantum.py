"""The exact quantum B2 (phase shifts): one temperature and a 200-point inversion scan.

Targets: one temperature below 0.5 s (the phase-shift table included), a
200-point scan of the zero-density Joule inversion below 30 s, on one core.
CPU time of this process is printed beside the wall time: on a shared
machine the wall time is noisy; the figures are a guide, not a test.

Run ``python -m mdsim.bench.quantum``.
"""
import sys
import time
from pathlib import Path

import numpy as np

from analysis.inversion import virial_series
from analysis.virial.quantum_exact import b2_exact, spin_components
from analysis.virial import h2_over_mu_K_A2
from analysis.virial_eos import VirialGas
from mdsim.engine.potentials import read_table
from mdsim.units import N_A

CONFIGS = Path(__file__).resolve().parents[2] / "configs"
GASES = {  # name: (table, molar mass kg/mol, spin choice)
    "helium": ("helium_lm2m2.csv", 4.002602e-3, spin_components("bose")),
    "hydrogen": ("hydrogen_sg.csv", 2.01588e-3, spin_components("bose", ortho_fraction=0.75)),
}


def _timed(fn):
    w, c = time.perf_counter(), time.process_time()
    out = fn()
    return out, time.perf_counter() - w, time.process_time() - c


def main():
    for name, (table, molar, spin) in GASES.items():
        pot = read_table(CONFIGS / table)
        q = h2_over_mu_K_A2(molar / N_A, molar / N_A)
        b2_exact(pot, 1.0, q, spin)  # compile the kernels, build the smallest table
        _, wall, cpu = _timed(lambda: b2_exact(pot, 300.0, q, spin))
        print(f"{name}: exact B2 at 300 K: {wall:.2f} s wall, {cpu:.2f} s CPU (target 0.5 s)")
        gas = VirialGas(pot, [1.0], molar, quantum="exact", spin=spin)
        grid = np.geomspace(10.0, 3000.0, 200)
        _, wall, cpu = _timed(lambda: [gas.dB_dT(t) for t in grid])
        print(f"{name}: 200-point dB2/dT scan 10-3000 K: {wall:.2f} s wall, {cpu:.2f} s CPU "
              "(target 30 s)")
        T_j, wall, cpu = _timed(lambda: virial_series.zero_density_joule_inversion_K(gas))
        print(f"{name}: zero-density Joule inversion {T_j:.1f} K ({wall:.1f} s wall, {cpu:.1f} s "
              "CPU, default scan)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
