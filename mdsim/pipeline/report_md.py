"""report.md: what was run, the results, the plots, the warnings, the assumptions.

:func:`write_report_md` writes the Markdown report of a run directory from
the state-point records, the gathered tasks and the figures drawn; every
section is one function here.  Missing and failed tasks are listed, never
dropped.
"""
import math
import os
import platform
import time

from mdsim.files import atomic_write_text
from mdsim.numbers import value_with_error
from mdsim.pipeline.coexistence_route import coexistence_text
from mdsim.pipeline.report_tables import (entropy_table, initial_state_table, results_table,
                                          virial_table)
from mdsim.pipeline.rundir import RunDir
from mdsim.pipeline.results_files import seed_text
from mdsim.pipeline.summary import best_simulation
from mdsim.study.routes import ROUTE_LABELS as ROUTE_NAMES, VIRIAL_ROUTES

__all__ = ["write_report_md", "CAUTIONS", "PACKAGES"]

CAUTIONS = (
    "Pressurised gas vessels and cryogenic temperatures can injure. Opening a charged vessel, "
    "and the cold a large expansion produces, need the precautions of your laboratory.",
    "These numbers are model estimates from a pair potential, with the statistical uncertainty "
    "stated; they are not a design basis for pressure equipment or cryogenic service.",
    "Defer to your local pressure-equipment codes and to licensed engineering practice for any "
    "vessel, valve or piping decision.",
)
"""Said at the top of every report."""

PACKAGES = ("free-expansion", "numpy", "scipy", "numba", "h5py", "pymbar", "pint", "matplotlib")
"""Packages whose versions every report names."""


def _versions():
    """Versions of Python and of the packages a result depends on."""
    from importlib.metadata import PackageNotFoundError, version
    out = {"python": platform.python_version()}
    for name in PACKAGES:
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = "not installed"
    return out


def _signed(text):
    """A difference written with its sign, '+' included."""
    return text if text.startswith("-") else "+" + text


def _potential_lines(study):
    """The pair potential of every species, its cut-off and where it comes from."""
    gas = study.gas
    pairs = gas.pairs_K_angstrom
    lines = []
    for a, name in enumerate(gas.species_names):
        desc = pairs.pots[a][a].describe()
        extras = ", ".join(f"{k} = {v:.6g}" if isinstance(v, float) else f"{k} = {v}"
                           for k, v in desc.items() if k not in ("form", "epsilon", "sigma"))
        sig = desc.get("sigma")
        lines.append(f"- {name}: {desc['form']}, epsilon/k = {desc['epsilon']:.6g} K"
                     + (f", sigma = {sig:.6g} angstrom" if sig is not None else "")
                     + (f", {extras}" if extras else "")
                     + f", molar mass {gas.molar_masses_kg_mol[a] * 1e3:.6g} g/mol"
                     + (f", mole fraction {gas.fractions[a]:.6g}" if gas.n_species > 1 else ""))
    lines.append(f"- cut-off {pairs.cutoff:g} sigma, analytic long-range tail corrections "
                 "beyond it")
    raw = study.raw.get("potential", {})
    source = raw.get("source") if isinstance(raw, dict) else None
    lines.append(f"- provenance: {source}" if source else
                 "- provenance: not stated in the study file (add it to the study's description)")
    return lines


def _with_unit(value, unit):
    if value is None:
        return "default"
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f"{value:g} {unit}"
    return str(value)


def _settings_lines(study, gathered):
    """Routes, target, budget, particles, seeds and what the tasks did."""
    sim = study.simulation or {}
    routes = sorted({t.get("route") for t in gathered["planned"]} - {None})
    seeds = sorted({seed_text(t) for t in gathered["planned"]})
    cpu = sum(float(res.get("cpu_seconds") or 0.0) for _, res, _ in gathered["results"].values())
    stopped = {}
    for _, res, _ in gathered["results"].values():
        stopped[res.get("stopped_by", "?")] = stopped.get(res.get("stopped_by", "?"), 0) + 1
    return [
        f"- routes: virial B2 and B2+B3 (always), simulation: "
        f"{', '.join(routes) if routes else 'none'}",
        f"- target standard error of Delta T: {_with_unit(sim.get('target_stderr'), 'K')}; "
        f"CPU budget per task: {_with_unit(sim.get('max_cpu_time'), 's')}",
        f"- study seed: {sim.get('seed', 'default')}; task seeds: {', '.join(seeds) or '-'}",
        f"- simulation tasks: {len(gathered['planned'])} planned, {len(gathered['results'])} done "
        f"(stopped by: " + (", ".join(f"{k} {v}" for k, v in sorted(stopped.items())) or "-")
        + f"), {len(gathered['failed'])} failed, {len(gathered['missing'])} not finished; "
        f"CPU time of the finished tasks {cpu:.1f} s",
    ]


def _quantum_line(study):
    """The report's line on quantum effects: the virial routes' and the simulations'."""
    from mdsim.study.quantum_potential import uses_feynman_hibbs
    from mdsim.study.statepoints import virial_gas
    gas = study.gas
    virial = (f"virial routes: {gas.describe_quantum()}, {virial_gas(study).c_note}"
              if gas.quantum_correction else "the virial routes are classical")
    if uses_feynman_hibbs(study):
        return (f"- Quantum effects: {virial}; the simulations use the quadratic Feynman-Hibbs "
                "effective potential of each sampled temperature with its thermodynamic energy "
                "estimator (docs/physics.md section 3.5).")
    if gas.quantum_correction:
        return f"- Quantum effects: {virial}; the simulations are classical."
    return "- Quantum effects: classical statistics throughout (no quantum correction asked for)."


def _model_limits_line(study):
    """The report's line on what the interaction model leaves out."""
    if study.gas.molecules is not None:
        return ("- Rigid molecules: Lennard-Jones or Mie sites (with the study's site charges "
                "or point multipoles) on rigid bodies: no vibration in the simulated model, no "
                "polarisability, no three-body forces; B3 is the additive third virial "
                "coefficient of the same model.")
    if study.gas.three_body_c9_K_A9:
        return ("- Pair potential plus the Axilrod-Teller triple-dipole term in the B2 + B3 "
                "route's B3 (its non-additive part); the simulation routes sample the pair "
                "potential alone.")
    return ("- Pair-additive, spherical potential: three-body forces are neglected; B3 is the "
            "additive third virial coefficient of the same pair potential.")


def _assumptions(study, cv):
    """What every number of the report assumes."""
    counts = study.gas.describe_heat_capacity_counts()
    lines = [
        f"- Ideal-gas heat capacity: {cv.describe()}; {counts}." if counts else
        f"- Ideal-gas heat capacity: {cv.describe()}. A simulation of spherical particles "
        "carries only translation (3/2 R); rotations and vibrations enter only through this "
        "c_v_ig, so a wrong c_v_ig gives a wrong Delta T (3/2 R for a diatomic gas overstates "
        "its cooling by about 2/3).",
        _model_limits_line(study),
        _quantum_line(study),
        ("- Long-range part: the molecules' centre-centre distance is cut at the cut-off and "
         "the tail of molecules uncorrelated beyond it (each site-site potential averaged over "
         "both molecules' rotations) added to energies and pressures"
         if study.gas.molecules is not None else
         "- Long-range part: the potential is cut at the cut-off and the analytic tail "
         "correction of the full potential added to energies and pressures")
        + "; the direct route (NVE MD of the truncated and shifted potential) is corrected to "
        "the full potential by the change of <U_full - U_model> between the end states over "
        "the heat capacity.",
        "- The virial routes truncate the series after B2 and after B3; where the two differ "
        "noticeably the series is running out and only a simulation route can be trusted.",
        "- Error bars are one standard error from the statistical inefficiency of each sampled "
        "series (equilibration detected and discarded automatically); the virial routes have "
        "no statistical error but a truncation error that is not estimated.",
        "- The final state is the equilibrium state at the same internal energy in the larger "
        "volume (no heat, no work, no wall effects).",
    ]
    return lines


def _comparison_lines(points, records):
    """'Virial estimates against simulation': where the cheap estimates depart."""
    L = ["## Virial estimates against simulation", ""]
    rows = []
    for sp, rec in zip(points, records):
        sim = best_simulation(rec)
        if sim is None:
            continue
        parts = []
        for route in VIRIAL_ROUTES:
            vir = rec["delta_T_K"].get(route)
            if not vir or vir.get("value") is None:
                parts.append(f"{ROUTE_NAMES[route]} not available")
                continue
            d = vir["value"] - sim["value"]
            z = abs(d) / sim["stderr"] if sim.get("stderr") else math.inf
            diff = _signed(value_with_error(d, sim.get("stderr"), "K"))
            parts.append(f"{ROUTE_NAMES[route]} {diff} ({z:.1f} standard errors"
                         + (", departs" if z > 3.0 else "") + ")")
        rows.append(f"- state point {sp.index} ({sp.label()}): against the {sim['route']} route "
                    f"({value_with_error(sim['value'], sim.get('stderr'), 'K')}): "
                    + "; ".join(parts))
    if not rows:
        return L + ["No simulation route finished: the virial estimates stand unchecked.", ""]
    return L + ["Virial Delta T minus the simulation's; more than 3 standard errors apart is "
                "called a departure (the simulation's error bar only: the virial routes have "
                "no statistical error).", ""] + rows + [""]


def _what_was_run(study, gathered, rd):
    """Title, cautions, the study, its potential, settings and versions."""
    run_dir = rd.path
    L = [f"# Free-expansion report: {study.name}", ""]
    if study.description:
        L += [study.description, ""]
    L += [f"Built {time.strftime('%Y-%m-%d %H:%M:%S %Z')} from the files in `{run_dir}` "
          f"(rebuild with `mdsim report {run_dir}`).", ""]
    L += ["## Cautions", ""] + [f"- {c}" for c in CAUTIONS] + [""]
    L += ["## What was run", "", f"- study: `{study.name}` (resolved copy: `{rd.study_file.name}`)",
          f"- gas: {study.gas.name}" + (f" (species {', '.join(study.gas.species_names)})"
                                        if study.gas.n_species > 1 else ""), ""]
    L += ["Potential:", ""] + _potential_lines(study) + [""]
    L += ["Settings:", ""] + _settings_lines(study, gathered) + [""]
    versions = _versions()
    L += ["Versions: " + ", ".join(f"{k} {v}" for k, v in versions.items()), ""]
    return L


def _results(points, records, rd):
    """The results table and where the full numbers are."""
    L = ["## Results", "",
         "Delta T = T_f - T_i (negative: the gas cools), one standard error after ± (to two "
         "significant figures, the value rounded to the same place). "
         "T_f is from the best route available (energy, then microcanonical, then direct, "
         "then virial B2+B3). Δs is the entropy generated per mole, from the virial B2+B3 "
         "route's end states for every row; each route's own Δs is in the next table.", ""]
    L += results_table(points, records) + [""]
    L += ["The entropy generated per mole by each route, s(T_f, rho_f) - s(T_i, rho_i): the "
          "virial routes from the truncated series, each simulation route from its own end "
          "states (residual entropy (u_res - a_res)/T, a_res by test-particle insertion (test "
          "molecules at random orientations for rigid molecules) on canonical samples at T_i "
          "and at the route's T_f; docs/physics.md sections 6.2 and 6.3):", ""]
    L += entropy_table(points, records) + [""]
    L += _two_phase_lines(points, records)
    L += ["The particles column gives N of the state point's simulation tasks, per route "
          "when the routes differ. The virial coefficients of the pair potential at T_i "
          "(with the quantum correction when the study asks for it):", ""]
    L += virial_table(points, records) + [""]
    L += ["The initial state of each route. A state given by pressure is placed by the virial "
          "routes at the density of the B2 + B3 series; every simulation route finds the "
          "model's own density instead, sampling the pressure at T_i and correcting the "
          "density until the sampled pressure is within one standard error of the pressure "
          "asked for (\"pressure iteration, N steps\": N densities sampled). A state given "
          "by density shows the pressure each route sampled there.", ""]
    L += initial_state_table(points, records) + [""]
    L += ["Every state point and route, with the final states and the task settings, is in "
          f"`{rd.results_csv.name}`; the same numbers as JSON in `{rd.results_json.name}`.", ""]
    return L


def _two_phase_lines(points, records):
    """A paragraph naming the state points whose final state a route found two-phase."""
    flagged, coexistence = [], []
    for sp, rec in zip(points, records):
        sim = rec.get("simulation", {})
        routes = [route for route, entry in sim.items() if entry.get("two_phase")]
        if routes:
            flagged.append(f"state point {sp.index} ({', '.join(routes)})")
        for route in routes:
            text = coexistence_text(sim[route].get("coexistence"))
            if text:
                coexistence.append(f"- state point {sp.index}, {route} route, {text}")
    if not flagged:
        return []
    return ["**Two-phase final states**: " + "; ".join(flagged) + ". These final states lie "
            "inside the vapour-liquid region or are metastable (the evidence is in the "
            "warnings below); their Delta T is that of the simulated sample, not of vapour and "
            "liquid at equilibrium." + (" The expansion through coexistence (vapour and "
                                        "liquid at equilibrium):" if coexistence else ""),
            ""] + (coexistence + [""] if coexistence else [])


def _unfinished(gathered):
    """Missing and failed tasks, each by index, route and state point."""
    unfinished = gathered["failed"] + gathered["missing"]
    L = ["## Missing and failed tasks", ""]
    if not unfinished:
        return L + ["None: every planned task finished.", ""]
    L += ["These tasks have no result; their routes are absent from the table above. "
          "Run `mdsim run` on the same study and directory again to run or resume them "
          "(finished tasks are kept).", ""]
    for f in gathered["failed"]:
        L.append(f"- task {f['index']} ({f['route']}, state point {f['state_point_index']}): "
                 f"FAILED: {' '.join(str(f['error']).split())}")
    for m in gathered["missing"]:
        what = {"partial": "interrupted (a checkpoint is kept and will be resumed)",
                "damaged": "its task file is damaged (running the study again moves it aside "
                           "and redoes the task)"}.get(m["state"], "not run")
        L.append(f"- task {m['index']} ({m['route']}, state point "
                 f"{m['state_point_index']}): {what}")
    return L + [""]


def _plots(plot_files, plot_notes, run_dir):
    """The figures (PNG inline, PDF named) and notes on figures not drawn."""
    L = ["## Plots", ""]
    for title, paths in plot_files:
        png = [p for p in paths if str(p).endswith(".png")]
        pdf = [p for p in paths if str(p).endswith(".pdf")]
        if png:
            L += [f"### {title}", "", f"![{title}]({os.path.relpath(png[0], run_dir)})", ""]
            if pdf:
                L += [f"(PDF: `{os.path.relpath(pdf[0], run_dir)}`)", ""]
    for note in plot_notes:
        L.append(f"- {note}")
    if plot_notes:
        L.append("")
    return L


def _inversion(inversion):
    """The Joule and Joule-Thomson inversion temperatures (virial route)."""
    if inversion is None:
        return []
    L = ["## Joule inversion (virial route, B2 + B3)", "",
         f"- zero-density Joule (free-expansion) inversion temperature, the maximum of "
         f"B2(T): {value_with_error(inversion['joule_inversion_zero_density_K'], None, 'K')}; "
         "a free expansion "
         "from a dilute state cools the gas below it and warms it above it.",
         f"- zero-pressure Joule-Thomson (throttling) inversion temperature: "
         f"{value_with_error(inversion['joule_thomson_inversion_zero_pressure_K'], None, 'K')}. "
         "This is a "
         "different process (flow through a valve at constant enthalpy), listed because "
         "the two are often confused.", ""]
    L += [f"- {n}" for n in inversion.get("notes", [])[1:]]
    L += [f"- WARNING: {w}" for w in inversion.get("warnings", [])]
    return L + [""]


def _warnings_and_notes(points, records, gathered, study_warnings):
    """The study's and the state points' warnings, then the tasks' notes."""
    L = ["## Warnings", ""]
    warn = []
    for sp, rec in zip(points, records):
        warn += [f"- state point {sp.index}: {' '.join(str(w).split())}"
                 for w in rec.get("warnings", [])]
    warn = [f"- study: {' '.join(str(w).split())}" for w in study_warnings] + warn
    L += (warn or ["None."]) + [""]
    notes = [f"- task {k} ({task.get('route')}): {' '.join(str(n).split())}"
             for k, (task, res, _) in sorted(gathered["results"].items())
             for n in res.get("notes", [])]
    if notes:
        L += ["## Notes from the simulation tasks", ""] + notes + [""]
    return L


def _files(rd):
    """What each file of the run directory holds."""
    def name(path):
        return os.path.relpath(path, rd.path).replace(os.sep, "/")

    task = name(rd.task_file(0)).replace("0000", "NNNN")
    return ["## Files", "",
            f"- `{name(rd.study_file)}`: the study as run, every default filled in",
            f"- `{name(rd.tasks_file)}`: the planned tasks; `{task}`: one file per finished task "
            "(its settings, result and series)",
            f"- `{name(rd.results_csv)}`, `{name(rd.results_json)}`, `{name(rd.plots_dir)}/`, "
            f"this `{name(rd.report_md)}`, `{name(rd.log_file)}`", ""]


def write_report_md(path, study, points, records, gathered, plot_files, plot_notes, inversion,
                    cv, run_dir, study_warnings=()):
    """Write report.md; returns its text.

    Parameters
    ----------
    path : Path
        Where to write (``RunDir.report_md``).
    study : mdsim.study.reader.Study
    points : list of StatePoint
    records : list of dict
        The state-point records, in the order of ``points``.
    gathered : dict
        :func:`mdsim.pipeline.collect.gather_tasks`.
    plot_files : list of (str, list of Path)
        Title and files of each figure.
    plot_notes : list of str
    inversion : dict or None
        The virial Joule inversion.
    cv : analysis.heatcapacity model
        The ideal-gas heat capacity (described under the assumptions).
    run_dir : Path
        The run directory (figure links are relative to it).
    study_warnings : sequence of str
    """
    rd = RunDir(run_dir)
    L = _what_was_run(study, gathered, rd)
    L += _results(points, records, rd)
    L += _comparison_lines(points, records)
    L += _unfinished(gathered)
    L += _plots(plot_files, plot_notes, run_dir)
    L += _inversion(inversion)
    L += _warnings_and_notes(points, records, gathered, study_warnings)
    L += ["## Assumptions", ""] + _assumptions(study, cv) + [""]
    L += _files(rd)
    text = "\n".join(L)
    atomic_write_text(path, text)
    return text
