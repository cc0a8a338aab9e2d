"""A study answered by the virial routes alone (B2 only, and B2 + B3), in seconds.

The summary has the shape of a full run's (:func:`mdsim.pipeline.summary.run_summary`),
each state point with its ``virial`` coefficients, and no simulation route.
"""
__all__ = ["virial_records", "virial_study_summary"]


def virial_records(study):
    """The state-point records of a study with the virial routes only.

    Parameters
    ----------
    study : mdsim.study.reader.Study

    Returns
    -------
    list of dict
        :func:`mdsim.pipeline.summary.state_point_record` of each state point.

    Raises
    ------
    StudyError
        Before any record is made, when an initial pressure cannot be
        turned into a density: the virial routes have nothing to say there.
    """
    from mdsim.study.statepoints import resolve_initial_density
    from mdsim.pipeline.summary import state_point_record
    from mdsim.pipeline.virial_summary import virial_summary
    points = study.state_points()
    for sp in points:
        resolve_initial_density(study, sp)
    return [state_point_record(study, sp, {}, virial=virial_summary(study, sp)) for sp in points]


def virial_study_summary(study):
    """The run summary of a study by the virial routes (JSON-ready dict)."""
    from mdsim.pipeline.summary import run_summary
    return run_summary(study, virial_records(study))
