"""The low-density side of a table: the B2 + B3 virial series, the blend to simulation, the bases.

The table holds q(T, rho) = q_vir(T, rho) + w(rho) D_q(T, rho) (see
:mod:`mdsim.cstable.table`).  Here are q_vir from stored B2, B3 nodes
(:func:`virial_nodes`, :class:`VirialSeries`), the smooth step w(rho)
(:func:`blend`) and the cardinal spline bases D_q is built on
(:func:`cardinal_basis`).  Reduced units: T* = kT / epsilon, rho* =
rho sigma^3; ``_v`` marks the fine temperature nodes of the coefficients.
"""
import numpy as np

__all__ = ["virial_nodes", "VirialSeries", "blend", "cardinal_basis", "N_VIRIAL_NODES"]

# Fine temperature nodes of the stored virial coefficients: enough that a
# cubic Hermite interpolant of B(T) is exact to ~1e-9 relative.
N_VIRIAL_NODES = 160
VIRIAL_T_MARGIN = 1.3


def virial_nodes(pot, T_min, T_max):
    """B2, B3 and their T-derivatives on fine nodes: dict of arrays, shape=(N_VIRIAL_NODES,).

    The nodes span [T_min, T_max] widened by ``VIRIAL_T_MARGIN`` on both
    sides, evenly in ln T*.
    """
    from analysis.virial import b2, b3
    T_v = np.geomspace(T_min / VIRIAL_T_MARGIN, T_max * VIRIAL_T_MARGIN, N_VIRIAL_NODES)
    B = b2(pot, T_v)
    C = b3(pot, T_v)
    return {"temperature_red": T_v, "B2": B[0], "dB2_dT": B[1], "d2B2_dT2": B[2],
            "B3": C[0], "dB3_dT": C[1], "d2B3_dT2": C[2]}


class VirialSeries:
    """q_vir(T, rho) from stored B2, B3 nodes (cubic Hermite in T, value and slope exact).

    Parameters
    ----------
    nodes : dict
        As :func:`virial_nodes` returns (or a table file stores).

    Notes
    -----
    u_vir = -T^2 (B' rho + C' rho^2 / 2), Z_vir = 1 + B rho + C rho^2,
    cv_vir = -(2 T B' + T^2 B'') rho - (2 T C' + T^2 C'') rho^2 / 2
    (B = B2, C = B3 per molecule, primes d/dT*; Hirschfelder, Curtiss and
    Bird, 1954, chapter 3).
    """

    def __init__(self, nodes):
        from scipy.interpolate import CubicHermiteSpline
        T = np.asarray(nodes["temperature_red"])
        self.T_range = (float(T[0]), float(T[-1]))
        self._s = {}
        for name in ("B2", "B3"):
            v, d1, d2 = (np.asarray(nodes[k]) for k in (name, f"d{name}_dT", f"d2{name}_dT2"))
            self._s[name] = (CubicHermiteSpline(T, v, d1), CubicHermiteSpline(T, d1, d2))

    def coefficients(self, T):
        """(B, B', B'', C, C', C'') at T, each shaped like T."""
        out = []
        for name in ("B2", "B3"):
            s0, s1 = self._s[name]
            out += [s0(T), s1(T), s1(T, 1)]
        return out

    def __call__(self, quantity, T, rho, derivative=0):
        """The series value of ``quantity`` ("u_res", "Z", "cv_res"); d/dT* of u_res with
        ``derivative=1``."""
        B, dB, d2B, C, dC, d2C = self.coefficients(T)
        if quantity == "u_res":
            if derivative == 1:
                return -(2 * T * dB + T * T * d2B) * rho - (2 * T * dC + T * T * d2C) * rho ** 2 / 2
            return -T * T * (dB * rho + dC * rho ** 2 / 2)
        if quantity == "Z":
            return 1.0 + B * rho + C * rho ** 2
        if quantity == "cv_res":
            return -(2 * T * dB + T * T * d2B) * rho - (2 * T * dC + T * T * d2C) * rho ** 2 / 2
        raise ValueError(quantity)


def blend(rho, lo, hi):
    """Smooth step w(rho): 0 below lo, 1 above hi, C1 in between.

    Examples
    --------
    >>> blend([0.0, 1.0, 2.0, 3.0], 0.0, 2.0).tolist()
    [0.0, 0.5, 1.0, 1.0]
    """
    x = np.clip((np.asarray(rho, dtype=float) - lo) / (hi - lo), 0.0, 1.0)
    return x * x * (3.0 - 2.0 * x)


def cardinal_basis(nodes):
    """A vector-valued BSpline whose component j interpolates the unit vector e_j.

    Degree min(3, len(nodes) - 1); a value at x is then the dot product of
    ``cardinal_basis(nodes)(x)`` with the node values, linear in them, so
    that standard errors propagate exactly.
    """
    from scipy.interpolate import make_interp_spline
    n = len(nodes)
    k = min(3, n - 1)
    return make_interp_spline(np.asarray(nodes, dtype=float), np.eye(n), k=k)
