"""``mdsim virial STUDY [--json] [--temperature T] [--pressure P | --density RHO]``: the virial
answers of every state point of a study, in seconds.

Every state point is solved with the virial equation of state of the
study's own pair potential, truncated after B2 and after B3
(:mod:`mdsim.pipeline.virial_study`).  ``--json`` prints the run summary
(the record shape of ``mdsim run --json``, each state point with its
``virial`` coefficients).  ``--temperature``, ``--pressure`` and
``--density`` replace the study's ``[initial]`` values (as ``mdsim sample``
takes its state from the command line).
"""
from mdsim.cli.options import add_state_options, print_json, state_overrides
from mdsim.numbers import value_with_error
from mdsim.pipeline.report_tables import VIRIAL_IN_CM

HELP = "the virial routes only (B2, B2 + B3) for every state point of a study, in seconds"
OPTION_FOR_SETTING = {"temperature_K": "--temperature", "pressure_Pa": "--pressure",
                      "density_mol_m3": "--density"}


def add_arguments(p):
    p.add_argument("study", help="study file (TOML)")
    p.add_argument("--json", action="store_true",
                   help="print the run-summary JSON (state_points with initial, final, "
                   "delta_T_K, entropy_generated_J_molK, virial, warnings)")
    add_state_options(p)


def _g(x, fmt=".6g", unit=""):
    return "unavailable" if x is None else f"{x:{fmt}}{(' ' + unit) if unit else ''}"


def _coefficients(v):
    """{SI key: 'value unit'} of B2, B3 and their T-derivatives in cm^3 units (SI in the JSON)."""
    out = {}
    for key, scale, unit in VIRIAL_IN_CM:
        x = v.get(key)
        err = v.get(key + "_stderr")  # a Monte Carlo B3 (rigid molecules)
        out[key] = "unavailable" if x is None else value_with_error(
            x * scale, None if err is None else err * scale, unit)
    return out


def _bar(p_Pa):
    return None if p_Pa is None else p_Pa / 1e5


def _state_point_lines(rec):
    sp, ini, fin, v = rec["state_point"], rec["initial"], rec["final"], rec["virial"]
    state = (f"p = {sp['pressure_Pa'] / 1e5:.6g} bar" if sp["pressure_Pa"] is not None
             else f"rho = {sp['density_mol_m3']:.6g} mol/m^3")
    how = f" ({ini['density_from']})" if ini.get("density_from") else ""
    q = f" ({v['quantum']})" if v.get("quantum_correction") else ""
    c = _coefficients(v)
    lines = [f"state point {rec['index']}: T = {sp['temperature_K']:.6g} K, {state}, "
             f"volume ratio {sp['volume_ratio']:.6g}",
             f"  initial density        {_g(ini['density_mol_m3'])} mol/m^3{how}",
             f"  initial pressure       {_g(_bar(ini['pressure_Pa']))} bar",
             f"  B2, dB2/dT at T_i      {c['B2_m3_mol']}, {c['dB2_dT_m3_molK']}{q}",
             f"  B3, dB3/dT at T_i      {c['B3_m6_mol2']}, {c['dB3_dT_m6_mol2K']}"]
    if v.get("B3_method", "quadrature") != "quadrature":
        lines.append(f"  B3 from                {v['B3_method']}")
    for route, label in (("virial_b2", "Delta T, B2 only"), ("virial_b2b3", "Delta T, B2 + B3")):
        entry = rec["delta_T_K"].get(route)
        if entry and entry.get("stderr") is not None:  # B3 by Monte Carlo (rigid molecules)
            lines.append(f"  {label:<22} {value_with_error(entry['value'], entry['stderr'], 'K')}")
        else:
            lines.append(f"  {label:<22} {_g(entry['value'] if entry else None, '.5g', 'K')}")
    if fin["source"] is not None:
        T_f = ("unavailable" if fin["temperature_K"] is None else
               value_with_error(fin["temperature_K"], fin.get("temperature_stderr_K"), "K",
                                digits=6))
        lines.append(f"  final state ({fin['source']})  T = {T_f}, "
                     f"p = {_g(_bar(fin['pressure_Pa']))} bar, "
                     f"rho = {_g(fin['density_mol_m3'])} mol/m^3")
    lines.append(f"  entropy generated      {_g(rec['entropy_generated_J_molK'], '.5g')} "
                 "J/(mol K)")
    lines += [f"  warning: {w}" for w in rec["warnings"]]
    return lines


def format_virial_table(summary):
    """Plain-text lines for ``mdsim virial``."""
    lines = [f"study {summary['study']}: virial routes (B2 only, and B2 + B3; "
             "Delta T = T_final - T_initial; each value carries its unit)"]
    gas = summary.get("gas", {})
    if gas.get("ideal_heat_capacity_counts"):  # rigid molecules: what the study's c_v holds
        how = ("given" if gas["ideal_heat_capacity_counts_given"]
               else "the default for linear molecules")
        lines.append(f'c_v_ig: ideal_heat_capacity_counts = "{gas["ideal_heat_capacity_counts"]}" '
                     f"({how}); used: {gas['ideal_heat_capacity_used']}")
    for rec in summary["state_points"]:
        lines += _state_point_lines(rec)
    lines += [f"warning: {w}" for w in summary.get("warnings", [])]
    return lines


def run(args):
    from mdsim.pipeline.virial_study import virial_study_summary
    from mdsim.study import read_study, with_initial_state
    study = read_study(args.study)
    overrides = state_overrides(args)
    if overrides:
        study = with_initial_state(study, **overrides)
    summary = virial_study_summary(study)
    if args.json:
        print_json(summary)
    else:
        print("\n".join(format_virial_table(summary)))
    return 0
