"""The names of a task's stage files, by what each stage samples.

Stage files are named by what they sample (:func:`stage_name`): a chain
``LABEL`` has the pilot ``LABEL-pilot.h5`` and the production stages
``LABEL-00.h5``, ``LABEL-01.h5``, ...  The labels are
:data:`INITIAL_STATE` (NVT at the initial state; ``initial-state-tryK``,
:func:`initial_state_try`, the K-th density of the pressure iteration of a
state given by pressure), ``final-density-guessK``
(:func:`final_density_guess`: the energy route's K-th temperature guess at
the final density), :data:`FINAL_STATE_NVE` (the microcanonical route's
final state), :data:`WALL_REMOVED_FILLING` and :data:`WALL_REMOVED_RELAXED`
(the direct route: the gas filling the enlarged box, then the relaxed tail),
:data:`INSERTION_INITIAL` and :data:`INSERTION_FINAL` (canonical runs with
test-particle insertions at a route's end states, for its entropy).

The files live in the task's stage folder of the run directory
(:meth:`mdsim.pipeline.rundir.RunDir.stage_file`).
"""
__all__ = ["stage_name", "final_density_guess", "initial_state_try", "INITIAL_STATE",
           "FINAL_DENSITY_GUESS", "FINAL_STATE_NVE", "WALL_REMOVED_FILLING",
           "WALL_REMOVED_RELAXED", "PHASE_SNAPSHOTS", "INSERTION_INITIAL", "INSERTION_FINAL",
           "STAGE_LABELS"]

INITIAL_STATE = "initial-state"
"""Stage label of the NVT chain at the initial state (every route)."""
FINAL_DENSITY_GUESS = "final-density-guess"
"""Stage label stem of the energy route's temperature guesses at the final density."""
FINAL_STATE_NVE = "final-state-nve"
"""Stage label of the microcanonical route's chain at the final density and energy."""
WALL_REMOVED_FILLING = "wall-removed-filling"
"""Stage label of the direct route's NVE stages while the gas fills the enlarged box."""
WALL_REMOVED_RELAXED = "wall-removed-relaxed"
"""Stage label of the direct route's NVE stages after the gas has filled the box."""
PHASE_SNAPSHOTS = "phase-snapshot"
"""Stage label of the short runs continuing a route's final state whose end configurations
the phase check reads (:mod:`mdsim.pipeline.phase_check`)."""
INSERTION_INITIAL = "insertion-initial"
"""Stage label of the canonical run with test-particle insertions at the initial state."""
INSERTION_FINAL = "insertion-final"
"""Stage label of the canonical run with test-particle insertions at (T_f, rho_f)."""
STAGE_LABELS = (INITIAL_STATE, FINAL_DENSITY_GUESS, FINAL_STATE_NVE, WALL_REMOVED_FILLING,
                WALL_REMOVED_RELAXED, PHASE_SNAPSHOTS, INSERTION_INITIAL, INSERTION_FINAL)
"""Every stage file of this version starts with one of these."""


def final_density_guess(k):
    """Stage label of the energy route's ``k``-th temperature guess at the final density.

    >>> final_density_guess(0)
    'final-density-guess0'
    """
    return f"{FINAL_DENSITY_GUESS}{int(k)}"


def initial_state_try(k):
    """Stage label of the ``k``-th density tried by the pressure iteration at the initial state.

    >>> initial_state_try(0)
    'initial-state-try0'
    """
    return f"{INITIAL_STATE}-try{int(k)}"


def stage_name(label, k=None):
    """The name of a stage file (without ``.h5``): the pilot when ``k`` is None.

    >>> stage_name(INITIAL_STATE), stage_name(INITIAL_STATE, 3)
    ('initial-state-pilot', 'initial-state-03')
    """
    return f"{label}-pilot" if k is None else f"{label}-{int(k):02d}"
