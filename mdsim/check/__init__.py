"""Checking pair-potential parameters against measured free expansions, and fitting them.

Given a study (its gas, potential and ideal-gas heat capacity) and measured
free expansions (:mod:`mdsim.check.measurements`), :func:`run_check`
predicts every measurement, compares, and optionally fits the parameters,
maps the sensitivity of each measurement to them, samples their posterior
and ranks candidate next experiments.

Modules, by idea:

- :mod:`~mdsim.check.measurements`: reading and writing the measurement files;
- :mod:`~mdsim.check.model`: reduced virial coefficients of one shape and the
  fast expansion model (:class:`ExpansionModel`);
- :mod:`~mdsim.check.predictors`: predictions from finished simulations, the
  corresponding-states table and the virial route, best first;
- :mod:`~mdsim.check.simulate`: fresh simulations of measured states;
- :mod:`~mdsim.check.statistics`: chi-square and the verdict;
- :mod:`~mdsim.check.fit`: the weighted least-squares fit and its confidence region;
- :mod:`~mdsim.check.suggest`: the next experiment (Fisher information);
- :mod:`~mdsim.check.posterior`: the emcee posterior;
- :mod:`~mdsim.check.invented`: invented measurements for tests;
- :mod:`~mdsim.check.run`: :func:`run_check`, the steps strung together;
- :mod:`~mdsim.check.plots`: the figures.
"""
from mdsim.check import plots
from mdsim.check.fit import (ONE_SIGMA, TWO_SIGMA, Objective, central_differences,
                             delta_chi2_for, fit_parameters, inside_region, sensitivities)
from mdsim.check.invented import invented_measurements
from mdsim.check.measurements import (ExpansionData, VirialData, read_expansion_data,
                                      read_virial_data, write_expansion_data, write_virial_data)
from mdsim.check.model import ExpansionModel, model_for_study, reduced_coefficients
from mdsim.check.posterior import sample_posterior
from mdsim.check.predictors import (RowPredictions, TablePredictor, load_table, match_run,
                                    predict_rows, run_predictions)
from mdsim.check.run import run_check
from mdsim.check.simulate import simulate_rows, study_asks_for_simulation
from mdsim.check.statistics import DEFAULT_LEVEL, chi2_test, verdict_sentence
from mdsim.check.suggest import candidate_grid, rank_candidates, suggest_experiments

__all__ = [
    "run_check", "load_table", "run_predictions", "match_run", "simulate_rows",
    "study_asks_for_simulation", "plots",
    "ExpansionData", "VirialData", "read_expansion_data", "read_virial_data",
    "write_expansion_data", "write_virial_data",
    "ExpansionModel", "model_for_study", "reduced_coefficients",
    "RowPredictions", "TablePredictor", "predict_rows",
    "DEFAULT_LEVEL", "chi2_test", "verdict_sentence",
    "Objective", "central_differences", "sensitivities", "fit_parameters", "inside_region",
    "delta_chi2_for", "ONE_SIGMA", "TWO_SIGMA",
    "candidate_grid", "rank_candidates", "suggest_experiments",
    "sample_posterior", "invented_measurements",
]
