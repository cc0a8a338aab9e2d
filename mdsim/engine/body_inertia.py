"""The principal moments of inertia of rigid body types, as the body integrator takes them.

The integrator (:mod:`mdsim.engine.body_integrator`) reads a zero moment as
an axis without rotation: a linear body, its sites on principal axis 1, has
the moments (0, I, I); an atom (one site at its centre) has none.  The
principal-axes transformation leaves round-off where the moment is 0, so
moments below :data:`ZERO_MOMENT` of the type's largest are set to 0 here.
"""
import numpy as np

from mdsim.errors import SettingError

__all__ = ["ZERO_MOMENT", "body_inertia_table"]

#: A principal moment below this fraction of the body's largest is exactly 0 (a linear body's
#: moment about its axis, round-off of the principal-axes transformation).
ZERO_MOMENT = 1e-9


def body_inertia_table(model, inertia_ti):
    """The principal moments of each body type, checked against the model's sites.

    Parameters
    ----------
    model : BodyPairModel
    inertia_ti : array_like, shape=(n_types, 3) or (3,) for one type, m sigma^2
        Ascending principal moments, in the principal-axes frame of the
        model's site positions.

    Returns
    -------
    ndarray, shape=(n_types, 3)
        The moments with those below :data:`ZERO_MOMENT` of the type's
        largest set to 0: three positive for a non-linear body, (0, I, I)
        for a linear one (its sites on axis 1; I the mean of the two, equal
        within :data:`ZERO_MOMENT`), all 0 for an atom.

    Examples
    --------
    >>> from mdsim.engine.potentials import LennardJones
    >>> from mdsim.engine.body_model import BodyPairModel
    >>> lj = [LennardJones(1.0, 1.0)] * 2
    >>> bent = ([[0.0, 0.1, 0.0], [0.25, -0.05, 0.0]], lj)
    >>> rod = ([[-0.3, 0.0, 0.0], [0.3, 0.0, 0.0]], lj)
    >>> m = BodyPairModel([bent, rod, ([[0.0, 0.0, 0.0]], lj[:1])], 2.5)
    >>> body_inertia_table(m, [[0.01, 0.04, 0.05], [1e-20, 0.09, 0.09], [0, 0, 0]]).tolist()
    [[0.01, 0.04, 0.05], [0.0, 0.09, 0.09], [0.0, 0.0, 0.0]]
    """
    table = np.array(inertia_ti, dtype=float)
    if table.ndim == 1:
        table = table.reshape(1, -1)
    n_types = len(model.site_start_t) - 1
    if table.shape != (n_types, 3) or not np.all(np.isfinite(table)) or np.any(table < 0.0):
        raise SettingError("inertia_ti", table.tolist(), f"needs three principal moments "
                           f"(m sigma^2, >= 0, ascending) for each of the {n_types} body types")
    for t in range(n_types):
        i_t, sites = table[t], model.site_body_ki[model.site_start_t[t]:model.site_start_t[t + 1]]
        i_t[i_t < ZERO_MOMENT * i_t.max()] = 0.0
        zero = int(np.count_nonzero(i_t == 0.0))
        reach = max(float(np.max(np.abs(sites))), 1.0)
        if model.rotates_t[t] == 0 or zero == 3:
            problem = None if (model.rotates_t[t] == 0 and zero == 3) else (
                "is an atom (one site at its centre), which does not rotate: give 0, 0, 0"
                if model.rotates_t[t] == 0 else "has sites off its centre: it needs moments")
        elif zero == 1 and i_t[0] == 0.0:
            problem = None if (abs(i_t[1] - i_t[2]) <= ZERO_MOMENT * i_t[2] and np.all(
                np.abs(sites[:, 1:]) <= ZERO_MOMENT * reach)) else (
                "has a zero moment about its axis but its sites are not on principal axis 1 "
                "or its other two moments differ (a linear body has 0, I, I)")
            i_t[1:] = 0.5 * (i_t[1] + i_t[2])
        else:
            problem = None if zero == 0 and np.all(np.diff(i_t) >= 0.0) else (
                "needs ascending moments: three positive (non-linear), 0, I, I (linear) or "
                "0, 0, 0 (atom)")
        if problem:
            raise SettingError("inertia_ti", np.asarray(inertia_ti).tolist(),
                               f"body type {t} {problem}")
    return table
