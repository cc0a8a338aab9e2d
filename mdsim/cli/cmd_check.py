"""``mdsim check``: a study's potential against measured free expansions.

    mdsim check STUDY --data FILE.csv [--virial-data FILE.csv] [--table FILE.h5]
                [--runs DIR] [--fit [--fit-shape] [--posterior]] [--suggest ...]
                [--level 0.05] [--out DIR] [--json]

Prints, per measurement, the prediction, its uncertainty, the residual and
the z-score, then chi-square per degree of freedom, its p-value and a
verdict sentence; writes into ``--out`` (default ``runs/NAME-check``):

    check.csv     one row per measurement; columns carry their units
    check.json    everything (what ``--json`` prints): ``rows``, ``check``
                  (chi2, dof, chi2_per_dof, p_value, level, consistent),
                  ``verdict``, ``second_virial``, ``fit`` (``epsilon_K`` and
                  ``sigma_angstrom`` each {value, stderr, stderr_scaled},
                  ``correlation``, ``chi2_per_dof``, ``points_used``, ...),
                  ``posterior``, ``suggestions``, ``notes``
    plots/check_parity.png|pdf, plots/check_residuals.png|pdf,
    plots/fit_region.png|pdf (with --fit), plots/posterior_corner.png|pdf (with --posterior)

The check itself predicts through the B2 + B3 virial route unless ``--table``
(the corresponding-states table) or ``--runs`` (finished simulations of the
same state points) give a better prediction; see :mod:`mdsim.check.predictors`.
"""
import csv
import json
import sys
from pathlib import Path

from mdsim.cli.options import nonnegative_int, positive_int, print_json, quantity, quantity_pair
from mdsim.errors import StudyError
from mdsim.numbers import value_with_error

HELP = ("check a study's potential against measured free expansions; fit, sensitivities and "
        "next experiments")
# the settings of mdsim.check.run_check and simulate_rows, and the options that give them
OPTION_FOR_SETTING = {"table": "--table", "runs_dir": "--runs", "level": "--level",
                      "fit_shape": "--fit-shape", "posterior": "--posterior",
                      "posterior.steps": "--posterior-steps",
                      "posterior.walkers": "--posterior-walkers", "posterior.seed": "--seed",
                      "suggest": "--suggest", "suggest.temperature_K": "--suggest-temperature",
                      "suggest.pressure_Pa": "--suggest-pressure",
                      "suggest.volume_ratio": "--suggest-ratio",
                      "suggest.uncertainty_K": "--suggest-uncertainty",
                      "suggest.criterion": "--suggest-criterion",
                      "suggest.count": "--suggest-count", "workers": "--workers"}

CSV_COLUMNS = ("line", "label", "initial_temperature_K", "initial_pressure_Pa",
               "initial_density_mol_m3", "volume_ratio", "measured_delta_T_K",
               "measured_uncertainty_K", "predicted_delta_T_K", "prediction_stderr_K", "route",
               "predicted_delta_T_B2_only_K", "residual_K", "z", "used",
               "d_delta_T_d_epsilon_K_per_K", "d_delta_T_d_sigma_K_per_angstrom",
               "fit_predicted_delta_T_K", "fit_z", "notes")


def add_arguments(p):
    p.add_argument("study", help="study file (TOML): its gas, potential and ideal-gas heat "
                   "capacity are checked")
    p.add_argument("--data", required=True, help="CSV of free-expansion measurements (header "
                   "with units, e.g. initial_temperature_K, initial_pressure_bar, volume_ratio, "
                   "delta_T_K, delta_T_uncertainty_K; '#' lines are comments)")
    p.add_argument("--virial-data", help="CSV of second-virial measurements (temperature_K, "
                   "B_cm3_mol, B_uncertainty_cm3_mol): checked, and fitted jointly with --fit")
    p.add_argument("--table", help="corresponding-states table (HDF5, from 'mdsim table build') "
                   "to predict and fit through instead of the virial route")
    p.add_argument("--runs", help="run directory (or a directory of them) whose finished "
                   "simulations of the same gas are reused where they hold a measured state")
    p.add_argument("--no-simulate", action="store_true", help="do not run the study's simulation "
                   "routes at measured states that no run directory holds (by default they run "
                   "when the study's [simulation] table lists routes)")
    p.add_argument("--workers", type=positive_int("--workers"), help="processes for those "
                   "simulations (default: the cores)")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    p.add_argument("--fit", action="store_true", help="fit epsilon and sigma by weighted least "
                   "squares")
    p.add_argument("--fit-shape", action="store_true", help="with --fit: also fit the Mie "
                   "repulsive exponent (a Lennard-Jones study becomes Mie n-6)")
    p.add_argument("--posterior", action="store_true", help="with --fit: sample the posterior "
                   "with emcee (the 'fit' extra) and draw a corner plot")
    p.add_argument("--posterior-steps", type=positive_int("--posterior-steps"), default=600,
                   help="MCMC steps per walker (default 600, the first 200 discarded)")
    p.add_argument("--posterior-walkers", type=positive_int("--posterior-walkers"), default=16,
                   help="MCMC walkers (default 16)")
    p.add_argument("--seed", type=nonnegative_int("--seed"), default=1,
                   help="random seed of the posterior sampler (default 1)")
    p.add_argument("--suggest", action="store_true", help="rank candidate next experiments by "
                   "how much one more measurement would shrink the parameter uncertainty")
    p.add_argument("--suggest-temperature", nargs=2, metavar=("LOW", "HIGH"),
                   help='candidate initial temperatures, e.g. "250 K" "400 K" (default: the '
                   "data's range)")
    p.add_argument("--suggest-pressure", nargs=2, metavar=("LOW", "HIGH"),
                   help='candidate initial pressures, e.g. "5 bar" "100 bar" (default: the '
                   "data's range)")
    p.add_argument("--suggest-ratio", nargs=2, type=float, metavar=("LOW", "HIGH"),
                   help="candidate volume ratios, e.g. 1.5 4 (default: the data's range)")
    p.add_argument("--suggest-uncertainty", help='standard uncertainty of the new measurement, '
                   'e.g. "0.05 K" (default: the median of the data\'s)')
    p.add_argument("--suggest-count", type=positive_int("--suggest-count"), default=5,
                   help="how many candidates to print (default 5)")
    p.add_argument("--suggest-criterion", choices=("det", "trace"), default="det",
                   help="det: area of the confidence region (default); trace: sum of the "
                   "parameter variances")
    p.add_argument("--level", type=float, default=0.05,
                   help="significance level of the verdicts (default 0.05)")
    p.add_argument("--out", help="output directory (default runs/NAME-check)")
    p.add_argument("--json", action="store_true", help="print check.json to stdout")


def _plain_json(result):
    return {k: v for k, v in result.items() if not k.startswith("_")}


def write_check_csv(result, path):
    """check.csv: one row per measurement, the columns of :data:`CSV_COLUMNS`."""
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(CSV_COLUMNS)
        for row in result["rows"]:
            vals = []
            for c in CSV_COLUMNS:
                v = row.get(c)
                if c == "notes":
                    v = "; ".join(v or [])
                vals.append("" if v is None else (f"{v:.10g}" if isinstance(v, float) else v))
            w.writerow(vals)


def write_outputs(result, out_dir):
    """check.csv, check.json and the plots; returns the list of paths written."""
    from mdsim.check import plots as check_plots
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    paths = [out / "check.csv", out / "check.json"]
    write_check_csv(result, paths[0])
    paths[1].write_text(json.dumps(_plain_json(result), indent=2) + "\n", encoding="utf-8")
    plots = out / "plots"
    if any(r["used"] for r in result["rows"]):
        paths += check_plots.plot_parity(result, plots / "check_parity")
        paths += check_plots.plot_residuals(result, plots / "check_residuals")
    chain = result.get("_posterior_chain")
    if "_fit" in result:
        paths += check_plots.plot_confidence_region(result["_fit"], plots / "fit_region",
                                                    posterior_chain=chain)
    if chain is not None:
        paths += check_plots.plot_corner(chain, list(result["_fit"]["names"]),
                                         plots / "posterior_corner")
    return paths


def _g(x, fmt=".4g"):
    return "-" if x is None else f"{x:{fmt}}"


def format_check(result):
    """The plain-text report of ``mdsim check``."""
    lines = [f"study {result['study']}: check against {result['data_file']}",
             f"  {'line':>5} {'T_i [K]':>8} {'state':>14} {'r':>5} {'measured [K]':>16} "
             f"{'predicted [K]':>16} {'resid [K]':>9} {'z':>7}  dDT/deps dDT/dsig  route"]
    for r in result["rows"]:
        state = (f"{r['initial_pressure_Pa'] / 1e5:.5g} bar" if r["initial_pressure_Pa"]
                 is not None else f"{r['initial_density_mol_m3']:.5g} mol/m3")
        pred = ("not predicted" if r["predicted_delta_T_K"] is None else
                value_with_error(r["predicted_delta_T_K"], r["prediction_stderr_K"]))
        measured = value_with_error(r["measured_delta_T_K"], r["measured_uncertainty_K"])
        lines.append(f"  {r['line']:>5} {r['initial_temperature_K']:8.5g} {state:>14} "
                     f"{r['volume_ratio']:5.3g} {measured:>16} {pred:>16} "
                     f"{_g(r['residual_K'], '.3f'):>9} "
                     f"{_g(r['z'], '.2f'):>7}  {_g(r['d_delta_T_d_epsilon_K_per_K'], '8.3g')} "
                     f"{_g(r['d_delta_T_d_sigma_K_per_angstrom'], '8.3g')}  {r['route'] or ''}")
    lines.append("  (sensitivities: K per K of epsilon/k, K per angstrom of sigma)")
    lines.append("")
    lines.append(result["verdict"])
    if "second_virial" in result:
        lines.append(result["second_virial"]["verdict"])
    f = result.get("fit")
    if f:
        lines.append("")
        lines.append(f"fit ({f['form']}, through {f['route']}, {f['points_used']} points):")
        for name in f["parameters"]:
            e = f[name]
            lines.append(f"  {name:<20} {value_with_error(e['value'], e['stderr'])}   "
                         "(scaled by sqrt(chi2/dof): "
                         f"{value_with_error(e['value'], e['stderr_scaled'])})")
        lines.append(f"  correlation(epsilon, sigma) {f['correlation']:.4f}; chi2/dof "
                     f"{f['chi2_per_dof']:.3g} ({f['dof']} dof), p = {f['p_value']:.2g}")
        lines.append(f"  {f['verdict']}")
    post = result.get("posterior")
    if post:
        lines.append("posterior (emcee, flat priors): " + "; ".join(
            f"{n} {q50:.5g} (16-84 %: {q16:.5g} to {q84:.5g})" for n, q16, q50, q84 in
            zip(post["parameters"], *post["quantiles_16_50_84"])))
    s = result.get("suggestions")
    if s:
        lines.append("")
        lines.append(f"next experiments at the {s['at']} (one measurement with uncertainty "
                     f"{s['uncertainty_K']:.3g} K; {s['meaning']}):")
        for c in s["candidates"]:
            lines.append(f"  T = {c['temperature_K']:.5g} K, p = {c['pressure_Pa'] / 1e5:.4g} "
                         f"bar, r = {c['volume_ratio']:.3g}: predicted Delta T "
                         f"{c['predicted_delta_T_K']:.3f} K, shrink {c['shrink']:.3f}")
    for n in result["notes"]:
        lines.append(f"note: {n}")
    return lines


def _suggest_settings(args):
    """The --suggest-* options as the settings of run_check's ``suggest`` (None without --suggest)."""
    if not args.suggest:
        if any(v is not None for v in (args.suggest_temperature, args.suggest_pressure,
                                       args.suggest_ratio, args.suggest_uncertainty)):
            raise StudyError("the --suggest-* options need --suggest")
        return None
    ratio = tuple(args.suggest_ratio) if args.suggest_ratio else None
    if ratio is not None and not (1.0 < ratio[0] <= ratio[1]):
        raise StudyError(f"option --suggest-ratio = {ratio[0]:g} {ratio[1]:g}: need "
                         "1 < LOW <= HIGH (volume ratios of an expansion)")
    return {"temperature_K": quantity_pair(args.suggest_temperature, "temperature",
                                           "--suggest-temperature"),
            "pressure_Pa": quantity_pair(args.suggest_pressure, "pressure", "--suggest-pressure"),
            "volume_ratio": ratio,
            "uncertainty_K": quantity(args.suggest_uncertainty, "temperature",
                                      "--suggest-uncertainty"),
            "criterion": args.suggest_criterion, "count": args.suggest_count}


def _simulate_missing(args, study, data, out_dir):
    """Simulate the measured states no run directory holds; return the run directories to use."""
    from mdsim.check import match_run, run_predictions, simulate_rows, study_asks_for_simulation
    runs_dirs = [args.runs] if args.runs else []
    if not study_asks_for_simulation(study) or args.no_simulate:
        return runs_dirs
    known = run_predictions(args.runs, study) if args.runs else []
    p_n, rho_n = data.pressure_Pa, data.density_mol_m3
    missing = [k for k in range(len(data)) if match_run(
        known, data.temperature_K[k], None if p_n is None else p_n[k],
        None if rho_n is None else rho_n[k], data.volume_ratio[k]) is None]
    if not missing:
        return runs_dirs
    sims = simulate_rows(study, data, missing, out_dir / "simulations",
                         workers=args.workers, quiet=args.quiet)
    for k, err in sims["failed"].items():
        print(f"mdsim check: measurement on line {int(data.line_n[k])} not simulated "
              f"({err}); it is predicted by the next route available", file=sys.stderr)
    if sims["done"]:
        runs_dirs.append(out_dir / "simulations")
    return runs_dirs


def run(args):
    from mdsim.check import load_table, run_check
    from mdsim.check.measurements import read_expansion_data, read_virial_data
    from mdsim.study.reader import read_study

    study = read_study(args.study)
    data = read_expansion_data(args.data)
    virial = read_virial_data(args.virial_data) if args.virial_data else None
    table = load_table(args.table) if args.table else None
    suggest = _suggest_settings(args)
    posterior = ({"steps": args.posterior_steps, "walkers": args.posterior_walkers,
                  "seed": args.seed} if args.posterior else None)
    out_dir = Path(args.out) if args.out else Path("runs") / f"{study.name}-check"
    runs_dirs = _simulate_missing(args, study, data, out_dir)
    result = run_check(study, data, virial, table=table, runs_dir=runs_dirs or None,
                       fit=args.fit, fit_shape=args.fit_shape, posterior=posterior,
                       suggest=suggest, level=args.level)
    paths = write_outputs(result, out_dir)
    if args.json:
        print_json(_plain_json(result))
    else:
        print("\n".join(format_check(result)))
        print(f"wrote {out_dir}/ ({', '.join(p.name for p in paths[:2])} and "
              f"{len(paths) - 2} plot files)")
    return 0
