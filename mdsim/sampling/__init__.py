"""Sampling one state point into a run file, and reading run files back.

:func:`sample_state_point` equilibrates and samples with an engine sampler,
streaming into one HDF5 run file that it can resume
(:mod:`~mdsim.sampling.state_point`); :func:`summarise` gives the means with
standard errors (:mod:`~mdsim.sampling.estimates`).  The run file itself:
:mod:`~mdsim.sampling.store` (writer, resume; the entry point),
:mod:`~mdsim.sampling.readers`, :mod:`~mdsim.sampling.integrity` (checksums,
damaged files) and :mod:`~mdsim.sampling.h5values` (plain values out of HDF5).
:func:`coexistence_point` gives the vapour-liquid coexistence of a potential
at one temperature by the Gibbs ensemble, cached in a run directory
(:mod:`~mdsim.sampling.coexistence`).  :mod:`~mdsim.sampling.three_body`
gives the first-order effect of the Axilrod-Teller energy on a free
expansion from pair-potential samples (a check, not a route).
One state point of a gas of rigid linear molecules: by Monte Carlo
(:mod:`~mdsim.sampling.rigid`) or molecular dynamics
(:mod:`~mdsim.sampling.rigid_dynamics`), from the box of
:mod:`~mdsim.sampling.rigid_box`; the same samplers as stages of a task's
run files: :mod:`~mdsim.sampling.rigid_stage` (Monte Carlo) and
:mod:`~mdsim.sampling.rigid_md_stage` (MD, thermostatted or at fixed energy), and
:mod:`~mdsim.sampling.rigid_insertion_stage` (Monte Carlo with test-molecule insertions,
for the residual chemical potential and entropy).
Non-linear rigid molecules: their box (:mod:`~mdsim.sampling.body_box`) and
their Monte Carlo as stages (:mod:`~mdsim.sampling.body_stage`), with test-body
insertions (:mod:`~mdsim.sampling.body_insertion_stage`).
"""
from mdsim.sampling.coexistence import CoexistencePoint, coexistence_point
from mdsim.sampling.estimates import Estimate, summarise
from mdsim.sampling.readers import (is_complete, read_attrs, read_checkpoint, read_final,
                                    read_run, read_samples)
from mdsim.sampling.state_point import SampleResult, sample_state_point

__all__ = ["sample_state_point", "SampleResult", "summarise", "Estimate", "is_complete",
           "read_attrs", "read_samples", "read_checkpoint", "read_final", "read_run",
           "coexistence_point", "CoexistencePoint"]
