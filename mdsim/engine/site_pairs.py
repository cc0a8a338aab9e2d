"""Site-site interactions of rigid molecules: the site-pair parameter table and the isotropic tail.

Shared by the models of linear molecules (:mod:`mdsim.engine.rigid_model`)
and of rigid bodies of any shape (:mod:`mdsim.engine.body_model`): their
sites interact through Lennard-Jones or Mie potentials, like sites by their
own potential and unlike sites by the Lorentz-Berthelot rules of
:func:`mdsim.engine.potentials.combine` (the one home of the rule), and
charged sites through the Coulomb columns of the same table (plain or damped
shifted-force, :mod:`mdsim.engine.rigid_pair`).  Reduced units.

Array suffixes: ``_t`` molecule type, ``_k`` site (of all types).
"""
import math

import numpy as np

from mdsim.engine.damped_coulomb import dsf_constants
from mdsim.engine.forms import FORM_LJ, FORM_MIE, N_PARAM
from mdsim.engine.molecular_tail import orientation_averaged_tail
from mdsim.engine.potentials import LennardJones, Mie, combine
from mdsim.engine.rigid_pair import CHARGES, DAMPING, DSF_OFFSET, DSF_SLOPE, N_PAIR_PARAM
from mdsim.errors import SettingError

__all__ = ["site_table", "site_pair_potential", "site_site_tail", "site_insertion_tail",
           "type_pair_tail_integrals", "check_fractions", "COULOMB_METHODS", "check_coulomb",
           "check_neutral", "coulomb_rows"]

#: The site charges' energy inside the molecular cut-off: plain Coulomb, or the damped
#: shifted force (docs/physics.md section 7b.4).
COULOMB_METHODS = ("cut", "dsf")


def site_table(types_pots):
    """Site potentials, their pair parameter rows, the form and the type starts.

    Parameters
    ----------
    types_pots : list of list of Mie
        The like-site potentials of each molecule type (LennardJones is a Mie).

    Returns
    -------
    pots : list of Mie
        All sites in order (LennardJones, or all as Mie when any is not LJ).
    params_kk : ndarray, shape=(n_sites, n_sites, N_PARAM), float64
    form : int
        FORM_LJ or FORM_MIE.
    site_start_t : ndarray, shape=(n_types + 1,), int64

    Examples
    --------
    >>> pots, p, form, start = site_table([[LennardJones(1.0, 1.0), LennardJones(2.0, 1.2)]])
    >>> p.shape[:2], form == FORM_LJ, start.tolist()
    ((2, 2), True, [0, 2])
    """
    starts, pots = [0], []
    for t, site_pots in enumerate(types_pots):
        if not site_pots:
            raise SettingError(f"types[{t}]", site_pots, "needs at least one site")
        for p in site_pots:
            if not isinstance(p, Mie):
                raise SettingError(f"types[{t}] site potential", p, "rigid molecules take "
                                   "Lennard-Jones or Mie sites; give one of those")
        pots += list(site_pots)
        starts.append(len(pots))
    all_lj = all(type(p) is LennardJones for p in pots)
    if not all_lj:  # a Mie 12-6 row is the same potential, so LJ sites mix with Mie ones
        pots = [Mie(p.epsilon, p.sigma, p.repulsive, p.attractive) for p in pots]
    n_k = len(pots)
    params_kk = np.array([[site_pair_potential(pots, k, m).params for m in range(n_k)]
                          for k in range(n_k)])
    return pots, params_kk, FORM_LJ if all_lj else FORM_MIE, np.array(starts, dtype=np.int64)


def site_pair_potential(pots, k, m):
    """The potential between sites k and m of ``pots`` (like, or Lorentz-Berthelot)."""
    a, b = pots[k], pots[m]
    return a if a == b else combine(a, b)


def site_site_tail(pots, site_start_t, rc, density, fraction_t=None, reach_k=None):
    """Isotropic site-site long-range corrections of a plain molecular cut-off.

    Parameters
    ----------
    pots : list of Mie
        The site potentials (:func:`site_table`).
    site_start_t : ndarray, shape=(n_types + 1,), int64
    rc : float, sigma
        Molecular (centre-centre) cut-off.
    density : float, 1/sigma^3
        Number density of molecules.
    fraction_t : array_like, shape=(n_types,), optional
        Mole fractions of the molecule types (default: one type).
    reach_k : array_like, shape=(n_sites,), sigma, optional
        Each site's distance from its molecule's centre of mass (default:
        every site at the centre, an atom).

    Returns
    -------
    u_tail : float, epsilon
        Energy per molecule.
    p_tail : float, epsilon/sigma^3

    Notes
    -----
    Every pair of molecules is taken as uncorrelated beyond the
    centre-centre cut-off rc, over positions and rotations:
    U_tail / N = 2 pi rho sum_ab x_a x_b sum_(k in a, m in b) I_u,km and
    P_tail = -(2 pi / 3) rho^2 sum_ab x_a x_b sum_km I_w,km, the atomic
    formulas of Allen and Tildesley, Computer Simulation of Liquids,
    section 2.8, with the site-site potential averaged over both
    molecules' rotations (:func:`mdsim.engine.molecular_tail.orientation_averaged_tail`;
    for sites at the centres :meth:`PairPotential.tail_integrals`).
    Point multipoles and neutral sets of site charges average to zero over
    the rotations and get no tail.

    >>> u, p = site_site_tail([LennardJones(1.0, 1.0)], np.array([0, 1]), 3.0, 0.5)
    >>> round(float(u), 4), round(float(p), 4)  # LJ atom: (8/9) pi rho (rc^-9 - 3 rc^-3), ...
    (-0.1551, -0.155)
    """
    x_t = check_fractions(fraction_t, len(site_start_t) - 1)
    s_u = s_w = 0.0
    for a in range(len(x_t)):
        for b in range(len(x_t)):
            i_u, i_w = type_pair_tail_integrals(pots, site_start_t, rc, a, b, reach_k)
            s_u += x_t[a] * x_t[b] * i_u
            s_w += x_t[a] * x_t[b] * i_w
    rho = float(density)
    return float(2.0 * math.pi * rho * s_u), float(-2.0 * math.pi / 3.0 * rho * rho * s_w)


def site_insertion_tail(pots, site_start_t, rc, density, fraction_t, type_a, reach_k=None):
    """Long-range tail energy of one inserted molecule of type ``type_a``, epsilon.

    Parameters
    ----------
    pots, site_start_t, rc, density, fraction_t, reach_k
        As for :func:`site_site_tail`.
    type_a : int
        Type of the inserted molecule.

    Returns
    -------
    float
        dU_tail,a = 4 pi rho sum_b x_b sum_(k in a, m in b) I_u,km, epsilon.

    Notes
    -----
    With U_tail = (2 pi / V) sum_ab N_a N_b S_ab (:func:`site_site_tail`, S_ab
    the site-site integrals summed over the sites of a and b), one more
    molecule of type a changes U_tail by (4 pi / V) sum_b N_b S_ab in the
    thermodynamic limit: twice the tail energy per molecule of a pure fluid
    (Frenkel and Smit, Understanding Molecular Simulation, 2nd ed., section
    7.2.1, mu_tail = 2 u_tail, applied site by site as :func:`site_site_tail`
    does).

    >>> pots = [LennardJones(1.0, 1.0)] * 2
    >>> start = np.array([0, 2])
    >>> tail = site_insertion_tail(pots, start, 3.0, 0.1, None, 0)
    >>> round(float(tail / site_site_tail(pots, start, 3.0, 0.1)[0]), 12)
    2.0
    """
    n_types = len(site_start_t) - 1
    x_t = check_fractions(fraction_t, n_types)
    a = int(type_a)
    if not 0 <= a < n_types:
        raise SettingError("type_a", type_a, f"types are 0 to {n_types - 1}")
    s_u = sum(x_t[b] * type_pair_tail_integrals(pots, site_start_t, rc, a, b, reach_k)[0]
              for b in range(n_types))
    return float(4.0 * math.pi * float(density) * s_u)


def type_pair_tail_integrals(pots, site_start_t, rc, a, b, reach_k=None):
    """Sums over the sites k of type a and m of type b of the tail integrals beyond the
    molecular cut-off rc, averaged over the rotations
    (:func:`mdsim.engine.molecular_tail.orientation_averaged_tail`; sites at the
    centres, ``reach_k`` None: :meth:`PairPotential.tail_integrals`): (S_u, S_w)."""
    s_u = s_w = 0.0
    st = site_start_t
    for k in range(st[a], st[a + 1]):
        for m in range(st[b], st[b + 1]):
            pot = site_pair_potential(pots, k, m)
            if reach_k is None or (reach_k[k] == 0.0 and reach_k[m] == 0.0):
                i_u, i_w = pot.tail_integrals(rc)
            else:
                i_u, i_w = orientation_averaged_tail(pot, float(reach_k[k]), float(reach_k[m]),
                                                     rc)
            s_u += i_u
            s_w += i_w
    return s_u, s_w


def check_fractions(fraction_t, n_types):
    """Mole fractions of the molecule types as an array (default: one type), checked."""
    x_t = np.ones(1) if fraction_t is None else np.asarray(fraction_t, dtype=float)
    if x_t.shape != (n_types,) or abs(x_t.sum() - 1.0) > 1e-9 or np.any(x_t < 0):
        raise SettingError("fraction_t", fraction_t, f"needs {n_types} mole fractions "
                           ">= 0 that sum to 1")
    return x_t


def check_coulomb(coulomb, damping):
    """The checked choice of the site charges' energy: ``(coulomb, damping)``.

    ``coulomb`` is "cut" (plain Coulomb q q / r inside the molecular
    cut-off) or "dsf" (the damped shifted force, damping alpha in 1/sigma;
    0 with "cut").
    """
    if coulomb not in COULOMB_METHODS:
        raise SettingError("coulomb", coulomb, 'must be "cut" or "dsf"')
    alpha = float(damping)
    if not 0.0 <= alpha < math.inf or (coulomb == "cut" and alpha):
        raise SettingError("damping", damping, 'must be a finite alpha >= 0 in 1/sigma, '
                           'and 0 with coulomb = "cut"')
    return coulomb, alpha


def check_neutral(where, site_q):
    """Raise unless the site charges ``site_q`` of one molecule (reduced) are finite and sum to 0.

    >>> check_neutral("types[0]", [0.5, -0.25, -0.25])
    """
    if not all(math.isfinite(q) for q in site_q):
        raise SettingError(f"{where} site charges", list(site_q), "charges must be finite")
    if abs(sum(site_q)) > 1e-9 * max(1.0, sum(abs(q) for q in site_q)):
        raise SettingError(f"{where} site charges", list(site_q), "a molecule must be "
                           "neutral; make its charges sum to 0")


def coulomb_rows(lj_rows, charge_k, rc, coulomb, alpha):
    """The site-pair table with its Coulomb columns after the pair potential's.

    Parameters
    ----------
    lj_rows : ndarray, shape=(n_sites, n_sites, N_PARAM)
        The pair potentials' rows (:func:`site_table`).
    charge_k : array_like, shape=(n_sites,)
        Reduced site charges.
    rc : float, sigma
        The molecular cut-off (Rc of the damped shifted force).
    coulomb, alpha
        :func:`check_coulomb`'s result.

    Returns
    -------
    ndarray, shape=(n_sites, n_sites, N_PAIR_PARAM)
        Each row: the pair potential, then the product of the two charges,
        alpha and the two constants of
        :func:`mdsim.engine.damped_coulomb.dsf_constants` (all three 0 for
        plain Coulomb, which is the damped shifted force with them 0).

    Examples
    --------
    >>> rows = coulomb_rows(np.zeros((2, 2, N_PARAM)), [0.5, -0.5], 3.0, "cut", 0.0)
    >>> rows.shape[2] == N_PAIR_PARAM, float(rows[0, 1, CHARGES])
    (True, -0.25)
    """
    q = np.asarray(charge_k, dtype=float)
    n_k = len(q)
    rows = np.zeros((n_k, n_k, N_PAIR_PARAM))
    offset, slope = dsf_constants(alpha, rc) if coulomb == "dsf" else (0.0, 0.0)
    rows[:, :, :N_PARAM] = lj_rows
    rows[:, :, CHARGES] = np.outer(q, q)
    rows[:, :, DAMPING], rows[:, :, DSF_OFFSET], rows[:, :, DSF_SLOPE] = alpha, offset, slope
    return rows
