"""Command line: parse arguments, call the Python API, turn errors into one line.

Exit codes: 0 success; 2 bad input (any :class:`~suitmap.errors.SuitmapError`);
1 an unexpected internal error; 130 interrupted.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from pathlib import Path

from suitmap._version import __version__
from suitmap.errors import SuitmapError, SuitmapWarning


def _progress_wanted(args) -> bool:
    return not args.quiet and sys.stderr.isatty()


def _cmd_demo(args) -> int:
    from suitmap.pipeline.demo import run_demo

    out = Path(args.out)
    manifest = run_demo(out, overwrite=args.overwrite, progress=_progress_wanted(args))
    root = manifest.parent
    print(f"demo inputs:  {out.resolve()}")
    print(f"demo outputs: {root}")
    print(f"manifest:     {manifest}")
    print("The demo region, climate and organism are invented. Outputs are screening-level "
          "estimates, not a basis for control decisions.")
    return 0


def _cmd_run(args) -> int:
    from suitmap.pipeline.finished import finished_manifest

    done = None if args.overwrite else finished_manifest(args.runfile)
    if done is not None:
        if not args.quiet:
            print(f"nothing to do: the outputs in {done.parent} are up to date with {args.runfile} "
                  "(no file written; --overwrite redoes them)")
        return 0
    from suitmap.pipeline.analysis import run

    manifest = run(args.runfile, overwrite=args.overwrite, progress=_progress_wanted(args),
                   workers=args.workers, scheduler_address=args.scheduler)
    if not args.quiet:
        print(f"outputs:  {manifest.parent}")
        print(f"manifest: {manifest}")
    return 0


def _cmd_report(args) -> int:
    from suitmap.writers.report import write_report

    manifest = write_report(args.outdir)
    if not args.quiet:
        print(f"report:   {manifest.parent / 'report.html'}")
        print(f"methods:  {manifest.parent / 'methods.md'}")
    return 0


def _cmd_check(args) -> int:
    from suitmap.config.runfile import load_run
    from suitmap.pipeline.analysis import check_run

    loaded = load_run(args.runfile)
    if loaded.inventory:  # before reading the files: what the scenario sets found and lack
        print("scenario sets (model × pathway × period):")
        print("\n".join(f"  {line}" for line in loaded.inventory), flush=True)
    run, profile, opened = check_run(loaded)
    print(f"run file: {run.path}")
    print(f"profile:  {run.profile_path} ({profile.organism.name})")
    print(f"periods:  {len(opened)} (1 baseline, {len(opened) - 1} scenarios)")
    for pc in opened:
        p = pc.period
        tags = ", ".join(f"{k} {v}" for k, v in (("model", p.model), ("pathway", p.pathway),
                                                ("period", p.period)) if v)
        print(f"[{p.kind}] {p.name}: years {p.years[0]}-{p.years[1]}" + (f" ({tags})" if tags else ""))
        for line in pc.qa.lines()[1:]:
            print(line)
        for note in pc.notes:
            print(f"  note: {note}")
    print("usable: yes")
    return 0


def _cmd_summarize(args) -> int:
    from suitmap.pipeline.regions import summarize

    csv = summarize(args.runfile, args.regions, args.field, layer=args.layer,
                    overwrite=args.overwrite)
    if not args.quiet:
        print(f"regions: {csv}")
        print(f"         {csv.with_suffix('.gpkg')}")
    return 0


def _cmd_fit(args) -> int:
    from suitmap.fit import fit_all, group_by_temperature, linear_part
    from suitmap.fit.ranking import write_ranking_csv
    from suitmap.fit.report import (curve_optimum, plot_fits, read_lab_csv, upper_limit,
                                    write_profile_toml)
    import numpy as np

    from suitmap.kernels.rates import MODELS

    data = read_lab_csv(args.labdata)
    models = MODELS if args.model == "all" else tuple(args.model.split(","))
    unknown = [m for m in models if m not in MODELS]
    if unknown:
        raise SuitmapError(f"--model: unknown model {unknown[0]!r}; choose from {', '.join(MODELS)} or all")
    stem = Path(args.labdata).stem
    profile_path = Path(args.profile or f"{stem}_profile.toml")
    figure_path = Path(args.figure or f"{stem}_fits.png")
    ranking_path = Path(args.ranking or profile_path.parent / f"{stem}_ranking.csv")
    for p in (profile_path, figure_path, ranking_path):
        if p.exists() and not args.overwrite:
            raise SuitmapError(f"{p} exists; pass --overwrite to replace it or choose another name")
    rows = data
    if args.rows == "group":
        data = group_by_temperature(rows)
    results = fit_all(data, models, criterion=args.criterion)
    lp = linear_part(data)
    temps = len(np.unique(data.temperature))
    print(f"lab data: {args.labdata} ({len(rows)} rows, {temps} temperatures)")
    if args.rows == "individual":
        print(f"rows: each of the {len(rows)} rows is one observation (--rows individual)")
    elif len(rows) > temps:
        print(f"rows: grouped by temperature into {temps} groups (mean development time, "
              f"weight = individuals per group; --rows individual fits every row)")
    else:
        print(f"rows: one per temperature (weight = {'n' if rows.n is not None else 'equal'})")
    print(f"linear part ({', '.join(f'{x:g}' for x in lp.temperatures)} °C): lower_threshold "
          f"{lp.lower_threshold:.3f} °C (se {lp.lower_threshold_se:.3g}), degree_days_per_generation "
          f"{lp.degree_days_per_generation:.1f} °C·day (se {lp.degree_days_per_generation_se:.3g})")
    print(f"models ranked by {args.criterion.upper()} (best first):")
    for r in results:
        value = getattr(r, args.criterion)
        score = (f"{args.criterion.upper()} " + (f"{value:9.2f}  " if np.isfinite(value)
                                                 else "undefined  ") if r.converged else "")
        print(f"  {score}{r.summary()}")
    best = results[0]
    write_profile_toml(best, data, profile_path, organism_name=args.name or stem,
                       overwrite=args.overwrite, upper="limit")
    write_ranking_csv(results, ranking_path, overwrite=args.overwrite)
    plot_fits(data, results, figure_path, overwrite=args.overwrite, criterion=args.criterion,
              observations=rows if len(rows) > len(data) else None)
    topt = curve_optimum(best)
    print(f"upper_threshold {upper_limit(best, data):.3f} °C (where the {best.model} curve "
          "falls to zero); optimum " + (f"{topt:.3f} °C (fastest development)" if topt is not None
                                        else "none (no maximum)"))
    print(f"profile ({best.model}): {profile_path}")
    print(f"ranking: {ranking_path}")
    print(f"figure:  {figure_path}")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="suitmap",
        description="Degree-days, generations and thermal suitability of an insect on gridded "
                    "baseline and scenario climate. Screening-level estimates only.")
    parser.add_argument("--version", action="version", version=f"suitmap {__version__}")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--debug", action="store_true", help="show tracebacks of errors")
    common.add_argument("--quiet", action="store_true", help="no progress bar, fewer messages")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    p = sub.add_parser("demo", parents=[common],
                       help="run the whole pipeline on the bundled invented sample data")
    p.add_argument("--out", default="suitmap-demo",
                   help="folder to create for the demo inputs and results (default: ./suitmap-demo)")
    p.add_argument("--overwrite", action="store_true", help="replace the folder if it exists")
    p.set_defaults(func=_cmd_demo)

    p = sub.add_parser("run", parents=[common], help="compute and write every layer of a run file")
    p.add_argument("runfile", help="run file (TOML)")
    p.add_argument("--overwrite", action="store_true",
                   help="replace the output folder if it exists")
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="run on a local dask.distributed cluster of N worker processes")
    p.add_argument("--scheduler", default=None, metavar="ADDRESS",
                   help="run on an existing dask.distributed scheduler, e.g. tcp://host:8786")
    p.set_defaults(func=_cmd_run)

    p = sub.add_parser("fit", parents=[common],
                       help="fit development-rate models to lab development times and write a profile")
    p.add_argument("labdata", help="CSV with temperature (°C), development time (days), optional n")
    p.add_argument("--model", default="all",
                   help="model(s) to fit, comma-separated, or 'all' (default)")
    p.add_argument("--criterion", default="aicc", choices=("aicc", "aic", "bic"),
                   help="ranking criterion (default aicc, for the small samples of lab studies)")
    p.add_argument("--rows", default="group", choices=("group", "individual"),
                   help="group: rows at one temperature are pooled into one group (mean time, "
                        "weight = individuals; default); individual: every row is an observation")
    p.add_argument("--name", default=None, help="organism name written into the profile")
    p.add_argument("--profile", default=None, help="profile TOML to write (default <csv>_profile.toml)")
    p.add_argument("--figure", default=None, help="PNG of data and fits (default <csv>_fits.png)")
    p.add_argument("--ranking", default=None,
                   help="CSV of every model's criteria, ΔAICc, Akaike weight and parameters "
                        "(default <csv>_ranking.csv beside the profile)")
    p.add_argument("--overwrite", action="store_true",
                   help="replace existing profile/figure/ranking files")
    p.set_defaults(func=_cmd_fit)

    p = sub.add_parser("check", parents=[common],
                       help="read every input of a run file and print a QA summary, computing nothing")
    p.add_argument("runfile", help="run file (TOML)")
    p.set_defaults(func=_cmd_check)

    p = sub.add_parser("report", parents=[common],
                       help="(re)write report.html and methods.md of an output folder")
    p.add_argument("outdir", help="output folder of a run (holds manifest.json)")
    p.set_defaults(func=_cmd_report)
    p = sub.add_parser("summarize", parents=[common],
                       help="summarize a finished run's layers by region (km², means), recomputing nothing")
    p.add_argument("runfile", help="run file (TOML) whose output folder to summarize")
    p.add_argument("--regions", default=None, metavar="FILE",
                   help="vector file of the regions (GeoPackage, shapefile, GeoJSON, ...; "
                        "default: the run file's [regions])")
    p.add_argument("--field", default=None, metavar="NAME", help="the column naming each region")
    p.add_argument("--layer", default=None, help="layer of a multi-layer vector file")
    p.add_argument("--overwrite", action="store_true", help="replace existing regions.csv/.gpkg")
    p.set_defaults(func=_cmd_summarize)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    from suitmap.pipeline.warnings_once import WarningCollector

    collected = WarningCollector()  # alike warnings about many files: one line
    warnings.showwarning = collected.showwarning
    warnings.simplefilter("always", SuitmapWarning)
    try:
        return _call(args)
    finally:
        collected.flush()


def _call(args) -> int:
    try:
        return args.func(args)
    except SuitmapError as exc:
        if args.debug:
            raise
        print(f"suitmap: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except BrokenPipeError:  # output piped into e.g. `head`
        sys.stderr.close()
        return 0
    except KeyboardInterrupt:
        print("suitmap: interrupted; no outputs were written", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - the CLI promises one line, not a traceback
        if args.debug:
            raise
        first = str(exc).splitlines()[0] if str(exc) else ""
        print(f"suitmap: internal error: {type(exc).__name__}: {first} "
              "(rerun with --debug for the traceback and please report it)", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
