"""Command-line front end: parse, call one function, print. No physics here.

Every user error ends as one line on stderr and exit status 2, never a traceback.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from backbone.errors import BackboneError

__all__ = ["main", "build_parser"]

EXIT_USAGE = 2


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors (the usage text is available with --help)."""

    def error(self, message):  # noqa: D401 - argparse API
        self.exit(EXIT_USAGE, f"{self.prog}: {message} (see --help)\n")


def _read_text(path: str, what: str) -> str:
    try:
        return Path(path).read_text(encoding="utf-8")
    except OSError as err:
        raise BackboneError(f"{what} {path!r}: cannot read it ({err.strerror or err})") from err
    except UnicodeDecodeError as err:
        raise BackboneError(f"{what} {path!r}: not a UTF-8 text file") from err


def _add_condition_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("sample and spectrometer")
    src = g.add_mutually_exclusive_group()
    src.add_argument("--tau-c", type=float, metavar="NS", help="rotational correlation time [ns] (0.1-500)")
    src.add_argument("--sequence", metavar="FILE", help="protein sequence (plain one-letter or FASTA); tau_c is estimated from its mass")
    src.add_argument("--mass", type=float, metavar="KDA", help="protein mass [kDa]; tau_c is estimated from it")
    g.add_argument("--temperature", default="25", metavar="T", help="sample temperature, °C or with unit (25, 25C, 298.15K); default 25 °C")
    g.add_argument("--solvent", default="H2O", choices=["H2O", "D2O"], help="solvent for the viscosity (default H2O)")
    fld = g.add_mutually_exclusive_group()
    fld.add_argument("--field", type=float, metavar="MHZ", help="1H Larmor frequency [MHz] (100-1500), default 600")
    fld.add_argument("--b0", type=float, metavar="TESLA", help="field as B0 [T] instead of --field")
    g.add_argument("--labeling", default="13c15n", metavar="ID", help="labeling scheme id or TOML file (see `backbone labelings`); default 13c15n")
    g.add_argument("--deuteration", type=float, metavar="LEVEL", help="deuteration level 0-1 at non-exchangeable sites (perdeuterated schemes)")
    g.add_argument("--s2", type=float, default=1.0, help="model-free order parameter S2 (default 1: rigid)")
    g.add_argument("--tau-e", type=float, default=0.0, metavar="NS", help="model-free internal correlation time [ns] (default 0)")


def _conditions_from_args(args):
    from backbone.conditions import resolve_conditions
    from backbone.constants import proton_mhz_from_b0
    from backbone.units import temperature_to_kelvin

    proton_mhz = 600.0 if args.field is None else args.field
    if args.b0 is not None:
        if not args.b0 > 0:
            raise BackboneError(f"--b0 = {args.b0!r} T must be > 0")
        proton_mhz = float(proton_mhz_from_b0(args.b0))
    sequence = _read_text(args.sequence, "sequence file") if args.sequence else None
    return resolve_conditions(
        tau_c_ns=args.tau_c,
        sequence=sequence,
        mass_kda=args.mass,
        proton_mhz=proton_mhz,
        labeling=args.labeling,
        deuteration=args.deuteration,
        temperature_k=temperature_to_kelvin(args.temperature, where="--temperature"),
        solvent=args.solvent,
        s2=args.s2,
        tau_e_ns=args.tau_e,
        where=args.sequence or "",
    )


def _cmd_rates(args) -> int:
    from backbone.conditions import compute_rates
    from backbone.report import rates_document, rates_table

    conditions = _conditions_from_args(args)
    rates = compute_rates(conditions)
    doc = rates_document(conditions, rates)
    if args.json:
        print(json.dumps(doc, indent=2))
    else:
        print(rates_table(doc))
    return 0


def _cmd_labelings(args) -> int:
    from backbone.labeling import registered_schemes
    from backbone.report import labelings_table

    schemes = registered_schemes()
    if args.json:
        print(json.dumps({"labeling": [s.as_dict() for s in schemes.values()]}, indent=2))
    else:
        print(labelings_table(schemes.values()))
    return 0


def _experiment_list(text):
    if text is None:
        return None
    names = [n.strip() for n in text.split(",") if n.strip()]
    if not names:
        raise BackboneError("--experiment: give one or more experiment names separated by commas")
    return names


_TROSY = {"on": True, "off": False, "auto": "auto"}


def _cmd_plan(args) -> int:
    from backbone.plan import plan
    from backbone.report import plan_table

    if args.scenario:
        return _cmd_plan_scenario(args)
    conditions = _conditions_from_args(args)
    if args.residue is not None and not args.sequence:
        raise BackboneError("--residue needs --sequence (the residue is counted along that sequence)")
    sequence = None
    if args.residue is not None:
        from backbone.graph import parse_sequence

        sequence = parse_sequence(_read_text(args.sequence, "sequence file"), where=args.sequence)
    result = plan(
        conditions,
        experiments=_experiment_list(args.experiment),
        trosy=_TROSY[args.trosy],
        objective=args.objective,
        sequence=sequence,
        residue=args.residue,
    )
    doc = result.as_dict()
    doc["conditions"] = conditions.as_dict()
    if args.json:
        print(json.dumps(doc, indent=2))
    else:
        print(_conditions_line(doc["conditions"]))
        print()
        print(plan_table(doc))
    return 0


def _conditions_line(c: dict) -> str:
    return (
        f"tau_c {c['tau_c_ns']:.3g} ns ({c['tau_c_source']}), 1H {c['field_mhz']:g} MHz, {c['temperature_k']:.2f} K "
        f"in {c['solvent']}, labeling {c['labeling']}"
    )


def _cmd_plan_scenario(args) -> int:
    given = [f for f in ("tau_c", "sequence", "mass", "b0", "field", "deuteration") if getattr(args, f) is not None]
    if given:
        raise BackboneError(
            f"{args.scenario}: a scenario file sets the conditions; drop --{given[0].replace('_', '-')} "
            "(or plan without the file)"
        )
    from backbone.planning import plan_scenario, scenario_plan_table
    from backbone.scenario import load_scenario

    from backbone.coverage import coverage_table, recommend, recommendation_text, walk_coverage

    scenario = load_scenario(args.scenario)
    result = plan_scenario(scenario, experiments=_experiment_list(args.experiment))
    doc = result.as_dict()
    rec = recommend(result) if result.has_times else None
    coverage = walk_coverage(result)
    doc["coverage"] = coverage.as_dict()
    doc["recommendation"] = rec.as_dict() if rec is not None else None
    if args.json:
        print(json.dumps(doc, indent=2))
        return 0
    print(scenario_plan_table(result))
    print()
    if rec is not None:
        print(recommendation_text(rec))  # includes where the walk breaks
    else:
        print("No recommendation: the scenario has no calibration, so no times to fit in the budget.\n")
        print(coverage_table(coverage))
    return 0


def _progress_bar(label: str):
    """A progress callback drawing one updating line on stderr (only when stderr is a terminal)."""
    if not sys.stderr.isatty():
        return None

    def show(done: int, total: int) -> None:
        width = 30
        filled = int(width * done / max(total, 1))
        sys.stderr.write(f"\r{label} [{'#' * filled}{'.' * (width - filled)}] {done}/{total}")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()

    return show


def _cmd_compare(args) -> int:
    from backbone.compare import compare_scenario, comparison_table
    from backbone.scenario import load_scenario

    scenario = load_scenario(args.scenario)
    comparison = compare_scenario(scenario, experiments=_experiment_list(args.experiment))
    if args.plot:
        from backbone.plots import plot_throughput_vs_tau_c

        plot_throughput_vs_tau_c(comparison, args.plot, force=args.force)  # its crossovers and tau_c drawn in
    if args.json:
        print(json.dumps(comparison.as_dict(), indent=2))
    else:
        print(comparison_table(comparison))
        if args.plot:
            print(f"\nplot written to {args.plot}")
    return 0


def _cmd_sweep(args) -> int:
    from backbone.sweep import parse_grid, sweep, write_table

    tau_c = parse_grid(args.tau_c_grid, option="--tau-c")
    fields = parse_grid(args.field_grid, option="--field")
    labelings = [x.strip() for x in args.labeling.split(",") if x.strip()]
    trosy = {"on": True, "off": False, "auto": "auto", "both": "both"}[args.trosy]
    frame = sweep(
        tau_c_ns=tau_c,
        field_mhz=fields,
        labelings=labelings,
        experiments=_experiment_list(args.experiment),
        trosy=trosy,
        progress=_progress_bar("sweep"),
    )
    written = []
    if args.out:
        written.append(write_table(frame, args.out, force=args.force))
    if args.plot_throughput:
        from backbone.plots import plot_throughput_vs_tau_c

        written.append(plot_throughput_vs_tau_c(frame, args.plot_throughput, force=args.force))
    if args.plot_delays:
        from backbone.plots import plot_delays_vs_tau_c

        written.append(plot_delays_vs_tau_c(frame, args.plot_delays, force=args.force))
    if args.json:
        print(frame.to_json(orient="records"))
    elif not written:
        print(frame.to_string(index=False, max_rows=60))
    for path in written if not args.json else ():
        print(f"written: {path}")
    return 0


def _cmd_draw(args) -> int:
    from backbone.experiments import load_experiment
    from backbone.plots import plot_walk

    conditions = _conditions_from_args(args)
    path = plot_walk(
        load_experiment(args.experiment),
        args.out,
        conditions=conditions,
        trosy=args.trosy == "on",
        delays=args.delays,
        force=args.force,
    )
    print(f"written: {path}")
    return 0


def _cmd_fit(args) -> int:
    from backbone.fitting.run import fit_table_text, run_fit

    options = {}
    if args.model in ("decay", "decay-offset", "recovery", "two-point", "buildup"):
        options.update(errors=args.errors, progress=_progress_bar("fit"))
        if args.errors != "covariance":
            options.update(n_draws=args.draws, seed=args.seed)
        if args.model == "buildup":
            if args.j is None:
                raise BackboneError("--model buildup needs --j HZ (the active coupling; add --fit-j to fit it)")
            options.update(j_hz=args.j, fit_j=args.fit_j)
    elif args.model in ("tau-c", "ratio"):
        from backbone.units import temperature_to_kelvin

        if args.sequence:
            from backbone.graph import parse_sequence

            options["sequence"] = parse_sequence(_read_text(args.sequence, "sequence file"), where=args.sequence)
        options["temperature_k"] = temperature_to_kelvin(args.temperature, where="--temperature")
        options["solvent"] = args.solvent
        options["labeling"] = args.labeling
        if args.model == "tau-c":
            if args.field is not None:
                options["proton_mhz"] = args.field
        else:
            if args.field is None or args.scale is None:
                raise BackboneError(
                    "--model ratio needs --field MHZ and --scale X (1 when both spectra were recorded on the same "
                    "sample with the same scans, receiver gain and processing)"
                )
            options.update(field_mhz=args.field, scale=args.scale, trosy=args.trosy == "on")
            if args.experiment:
                options["experiments"] = _experiment_list(args.experiment)
    result = run_fit(args.data, model=args.model, **options)
    if args.csv:
        from backbone.sweep import write_table

        write_table(result.table, args.csv, force=args.force)
    if args.plot:
        from backbone.fitting.plots import plot_result

        plot_result(result, args.plot, force=args.force)
    if args.json:
        print(json.dumps(result.as_dict(), indent=2))
    else:
        print(fit_table_text(result))
    return 0


def _cmd_experiments(args) -> int:
    from backbone.experiments import registered_experiments
    from backbone.report import experiments_table

    models = registered_experiments().values()
    if args.json:
        print(json.dumps({"experiments": [_model_summary(m) for m in models]}, indent=2))
    else:
        print(experiments_table(models))
    return 0


def _model_summary(m) -> dict:
    return {
        "name": m.name,
        "walk": m.walk,
        "dimensions": list(m.dimensions),
        "needs": list(m.needs),
        "trosy_capable": m.trosy_capable,
        "peaks": [{"label": p.label, "sign": p.sign} for p in m.peaks],
        "objective": m.objective,
        "source": str(m.source),
    }


def _cmd_verify(args) -> int:
    from backbone.report import verify_document
    from backbone.transfer.verify import format_verify_table, verify_experiment, verify_step_kinds

    if args.experiment:
        from backbone.experiments import load_experiment

        rows = verify_experiment(load_experiment(args.experiment))
    else:
        rows = verify_step_kinds()
    doc = verify_document(rows)
    if args.json:
        print(json.dumps(doc, indent=2))
    else:
        print(format_verify_table(rows))
    return 0 if doc["passed"] else 1


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="backbone", description="Plan protein backbone triple-resonance NMR experiments.")
    from backbone import __version__

    parser.add_argument("--version", action="version", version=f"backbone {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)

    p = sub.add_parser("rates", help="relaxation rates of every backbone nucleus and coherence")
    _add_condition_options(p)
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_rates)

    p = sub.add_parser(
        "plan",
        help="throughput, optimal delays and relative sensitivity of experiments (from a scenario file or flags)",
    )
    p.add_argument("scenario", nargs="?", metavar="SCENARIO", help="scenario file (TOML; see scenarios/README.md)")
    _add_condition_options(p)
    g = p.add_argument_group("experiments")
    g.add_argument("--experiment", metavar="NAME[,NAME...]", help="experiments to plan (default: every bundled one); names or TOML files")
    g.add_argument(
        "--trosy", nargs="?", const="on", default="off", choices=sorted(_TROSY),
        help="TROSY versions: --trosy (on), --trosy auto (the better per condition); default off",
    )
    g.add_argument("--objective", metavar="PEAK|weakest|geometric-mean", help="override each experiment's delay objective")
    g.add_argument("--residue", type=int, metavar="N", help="walk residue N of --sequence instead of the typical residue")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_plan)

    p = sub.add_parser("experiments", help="list the bundled experiment models and what each needs")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_experiments)

    p = sub.add_parser("verify", help="check the fast step algebra against an exact density-operator propagator")
    p.add_argument("experiment", nargs="?", metavar="EXPERIMENT", help="an experiment name or TOML file (default: every step kind)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_verify)

    p = sub.add_parser("compare", help="labeling schemes x experiments x fields for a scenario, with crossover tau_c")
    p.add_argument("scenario", metavar="SCENARIO", help="scenario file (TOML; see scenarios/README.md)")
    p.add_argument("--experiment", metavar="NAME[,NAME...]", help="experiments to compare (default: the scenario's)")
    p.add_argument("--plot", metavar="OUT", help="plot throughput against tau_c (PNG, SVG or PDF by extension)")
    p.add_argument("--force", action="store_true", help="overwrite an existing output file")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_compare)

    p = sub.add_parser("sweep", help="plan over grids of tau_c, field, labeling and experiments")
    p.add_argument("--tau-c", dest="tau_c_grid", default="log:2:60:30", metavar="GRID",
                   help="tau_c grid [ns]: start:stop:count, log:start:stop:count or a comma list (default log:2:60:30)")
    p.add_argument("--field", dest="field_grid", default="600,800,950", metavar="GRID", help="fields [MHz], same forms (default 600,800,950)")
    p.add_argument("--labeling", default="13c15n,2h13c15n", metavar="ID[,ID...]", help="labeling schemes (default 13c15n,2h13c15n)")
    p.add_argument("--experiment", metavar="NAME[,NAME...]", help="experiments (default: every bundled one)")
    p.add_argument("--trosy", default="off", choices=["on", "off", "auto", "both"], help="TROSY versions (default off)")
    p.add_argument("--out", metavar="FILE", help="write the table (.csv or .json)")
    p.add_argument("--plot-throughput", metavar="OUT", help="plot throughput against tau_c (PNG, SVG or PDF)")
    p.add_argument("--plot-delays", metavar="OUT", help="plot optimal and textbook delays against tau_c")
    p.add_argument("--force", action="store_true", help="overwrite existing output files")
    p.add_argument("--json", action="store_true", help="print the table as JSON records")
    p.set_defaults(func=_cmd_sweep)

    p = sub.add_parser("draw-walk", help="draw an experiment's walk on the graph of two residues, edges labelled with step efficiencies")
    p.add_argument("experiment", metavar="EXPERIMENT", help="experiment name or TOML file")
    p.add_argument("out", metavar="OUT", help="figure file (PNG, SVG or PDF by extension)")
    _add_condition_options(p)
    p.add_argument("--trosy", default="off", choices=["on", "off"], help="TROSY version (default off)")
    p.add_argument("--delays", default="optimal", choices=["optimal", "textbook"], help="delays the efficiencies are computed at")
    p.add_argument("--force", action="store_true", help="overwrite an existing file")
    p.set_defaults(func=_cmd_draw)

    p = sub.add_parser("fit", help="fit measured intensities or rates: decays, build-ups, tau_c, experiment ratios")
    p.add_argument("data", metavar="DATA", help="CSV/whitespace table or NMR-STAR file (see README: measured data)")
    p.add_argument("--model", required=True, choices=["decay", "decay-offset", "recovery", "two-point", "buildup", "tau-c", "ratio"])
    p.add_argument("--errors", default="covariance", choices=["covariance", "monte-carlo", "bootstrap"], help="parameter errors (default covariance)")
    p.add_argument("--draws", type=int, default=200, help="Monte Carlo / bootstrap draws (10-10000, default 200)")
    p.add_argument("--seed", type=int, help="random seed for Monte Carlo / bootstrap")
    p.add_argument("--j", type=float, metavar="HZ", help="active coupling of a build-up [Hz]")
    p.add_argument("--fit-j", action="store_true", help="fit the coupling of a build-up too")
    p.add_argument("--field", type=float, metavar="MHZ", help="1H frequency [MHz] of the data (tau-c: if the file has no field_mhz column; ratio: required)")
    p.add_argument("--labeling", default="15n", metavar="ID", help="labeling of the sample (tau-c, ratio; default 15n)")
    p.add_argument("--sequence", metavar="FILE", help="sequence, for the tau_c expected from the size")
    p.add_argument("--temperature", default="25", metavar="T", help="sample temperature (default 25 °C)")
    p.add_argument("--solvent", default="H2O", choices=["H2O", "D2O"])
    p.add_argument("--scale", type=float, metavar="X", help="ratio: known intensity scale between the two spectra (1 = same sample, scans, gain)")
    p.add_argument("--experiment", metavar="A,B", help="ratio: numerator and denominator experiments")
    p.add_argument("--trosy", default="off", choices=["on", "off"], help="ratio: TROSY versions")
    p.add_argument("--csv", metavar="OUT", help="write the per-residue table as CSV")
    p.add_argument("--plot", metavar="OUT", help="figure of data and fits (PNG, SVG or PDF)")
    p.add_argument("--force", action="store_true", help="overwrite existing output files")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_fit)

    p = sub.add_parser("labelings", help="list the bundled labeling schemes")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")
    p.set_defaults(func=_cmd_labelings)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except BackboneError as err:
        print(f"backbone: {err}", file=sys.stderr)
        return EXIT_USAGE
    except BrokenPipeError:  # e.g. `backbone rates | head`
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
