"""Command line: ``bhchem COMMAND ...``.

Every command accepts ``--family-file PATH`` (repeatable) to load user families
first, and ``-p NAME=VALUE`` (repeatable, or comma-separated) for parameters.
Bad input ends with one line on stderr and exit code 2, never a traceback.
"""
from __future__ import annotations

import argparse
import contextlib
import os
import sys
import warnings

from bhchem.errors import BhchemError, BhchemWarning, InvalidArgumentError
from bhchem.fileio import check_writable_folder, clean_stale, output_lock
from bhchem.present.serialize import to_json
from bhchem.declare.registry import load_family_file
from bhchem.core.compiled import bind, parse_number
from bhchem.declare.registry import get_family
from bhchem.declare.registry import available_families
from bhchem.conventions import convention_record
from bhchem.present.summary import show_json, show_text
from bhchem.present.critical_report import critical_json, critical_text
from bhchem.analysis.critical import find_critical_points, resolve_pressure, resolve_temperature
from bhchem.analysis.isobar import analyze_isobar
from bhchem.analysis.phases import phase_diagram
from bhchem.present.phase_text import diagram_json, diagram_text, isobar_json, isobar_text
from bhchem.present.plots import save, table_path
from bhchem.present.progress import progress_display
from bhchem.workflows.figures import adjust_check, compare_figure, make_figure, parse_vary
from bhchem.analysis.ensembles import compare_ensembles
from bhchem.present.ensemble_report import compare_json, compare_text
from bhchem.core.ensemble import charge_of
from bhchem.workflows.report import write_report
from bhchem.demo import FAMILY_FILE
from bhchem.workflows.atlas import parse_grid, scan
from bhchem.version import __version__
from bhchem.workflows.figures import KINDS
from bhchem.cli.analyses import register
from bhchem.cli.topology import register as register_topology
from bhchem.cli.metric import register as register_metric

EXIT_USAGE = 2


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage error is one line and exit code 2."""

    def error(self, message):  # noqa: D401 - argparse API
        raise _UsageError(f"{message} (see '{self.prog} --help')")


class _UsageError(Exception):
    pass


def parse_assignments(items) -> dict:
    """``['Q=1', 'd=5,b=2']`` -> ``{'Q': '1', 'd': '5', 'b': '2'}`` (values stay strings)."""
    out = {}
    for item in items or []:
        for part in str(item).split(","):
            part = part.strip()
            if not part:
                continue
            name, sep, value = part.partition("=")
            name, value = name.strip(), value.strip()
            if not sep or not name or not value:
                raise BhchemError(f"parameter {part!r} must look like NAME=VALUE (e.g. -p Q=1)")
            if name in out:
                raise BhchemError(f"parameter {name} given twice")
            out[name] = value
    return out


def _load_files(args) -> None:
    for path in getattr(args, "family_file", None) or []:
        load_family_file(path)


def _bound(args):
    family = get_family(args.family)
    return bind(family, conditions=getattr(args, "conditions", None),
                without=_without(args), **parse_assignments(args.param))


def _without(args) -> tuple:
    """Condition names from every ``--without`` (repeatable, or comma-separated)."""
    out = []
    for item in getattr(args, "without", None) or []:
        out.extend(n.strip() for n in str(item).split(",") if n.strip())
    return tuple(out)


def add_condition_args(p) -> None:
    """``--conditions SET`` and ``--without NAME``: which states count (see ``bhchem show``)."""
    p.add_argument("--conditions", metavar="SET",
                   help="which named condition set decides which states count (default: "
                        "'default', every condition; 'bhchem show FAMILY' lists the sets)")
    p.add_argument("--without", action="append", metavar="NAME",
                   help="drop a named condition (repeatable, or comma-separated)")


# -- commands ---------------------------------------------------------------
def cmd_families(args) -> int:
    fams = available_families()
    if args.json:
        out = {name: {"summary": f.summary, "reference": f.reference,
                      "convention": convention_record(f),
                      "parameters": {p.name: {"default": p.default,
                                              "dimension": str(p.length_dimension),
                                              "domain": p.domain.describe(p.name)}
                                     for p in f.all_parameters}}
               for name, f in fams.items()}
        # keys are family names: each entry carries its own conventions
        print(to_json(out, convention=False))
        return 0
    width = max(len(n) for n in fams)
    for name, f in fams.items():
        params = ", ".join(f"{p.name}={p.default:g}" for p in f.all_parameters) or "none"
        print(f"{name:<{width}}  {f.summary}")
        print(f"{'':<{width}}  parameters: {params}")
    return 0


def cmd_show(args) -> int:
    th = _bound(args)
    if args.json:
        print(to_json(show_json(th), family=th.family))
    else:
        print(show_text(th))
    return 0


@contextlib.contextmanager
def _warnings_in_output():
    """The result's warnings are printed with it (WARNING lines, a ``warnings`` key): do not
    repeat them on stderr as Python warnings."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", BhchemWarning)
        yield


def cmd_critical(args) -> int:
    th = _bound(args)
    with _warnings_in_output():
        doc = critical_json(th, with_exponents=args.command == "exponents")
    if args.json:
        print(to_json(doc, family=th.family))
    else:
        print(critical_text(doc))
    return 0


def parse_pressure(text: str, th) -> float:
    """'0.01', '1e-3' or relative to a critical point: '0.5Pc' (lowest physical critical
    pressure), '0.5Pc2' (the second, by pressure); see
    :func:`bhchem.analysis.critical.resolve_pressure`, which the API uses too."""
    return resolve_pressure(th, text)


def cmd_isobar(args) -> int:
    th = _bound(args)
    P = parse_pressure(args.pressure, th)
    with _warnings_in_output():
        res = analyze_isobar(th, P, critical_points=find_critical_points(th).physical)
    print(to_json(isobar_json(res), family=th.family) if args.json else isobar_text(res))
    return 0


def cmd_compare(args) -> int:
    if args.output:
        _check_plot_output(args.output)
    family = get_family(args.family)
    values = parse_assignments(args.param)
    names = {p.name for p in family.all_parameters}
    potentials = [n for n in values if n not in names and charge_of(n) is not None]
    if not potentials:
        raise BhchemError("compare needs the potential to hold fixed, e.g. -p Q=1 -p Phi_Q=0.5 "
                          "(Phi_J for the angular velocity)")
    charges = {charge_of(n) for n in potentials}
    cond = dict(conditions=getattr(args, "conditions", None), without=_without(args))
    th_q = bind(family, **cond, **{k: v for k, v in values.items() if k not in potentials})
    th_phi = bind(family, **cond, **{k: v for k, v in values.items() if k not in charges})
    if args.pressure:
        P = parse_pressure(args.pressure, th_q)
    else:
        cps = find_critical_points(th_q).physical
        P = 0.5 * cps[0].P if cps else th_q.typical_pressure()
    with _warnings_in_output():
        cmp = compare_ensembles(th_q, th_phi, P)
    print(to_json(compare_json(cmp), family=th_phi.family) if args.json else compare_text(cmp))
    if args.output:
        res = compare_figure(th_q, th_phi, P)
        with output_lock(args.output):
            for note in clean_stale(args.output):
                _note(f"{note} (left by an interrupted run)")
            path = save(res, args.output)
        print(f"wrote {path}", file=sys.stderr if args.json else sys.stdout)
    return 0


def cmd_phases(args) -> int:
    th = _bound(args)
    rng = None
    if args.pressure_range:
        rng = tuple(parse_pressure(v, th) for v in args.pressure_range)
        if rng[0] >= rng[1]:
            raise BhchemError("--pressure-range needs P1 < P2")
    progress = _progress(args, "isobars")
    with _warnings_in_output():
        pd = phase_diagram(th, pressure_range=rng, progress=progress)
    if progress:
        progress(None, None)
    print(to_json(diagram_json(pd), family=th.family) if args.json else diagram_text(pd))
    return 0


def _progress(args, what):
    """A progress callback (:func:`bhchem.present.progress.progress_display`): a line on
    stderr when it is a terminal, a bar in a notebook; None when silent (``--quiet``)."""
    bar = progress_display(what, quiet=getattr(args, "quiet", False))
    return None if bar.kind == "none" else bar


def _note(line: str) -> None:
    """One line on stderr about a recovery (a stale temporary removed, a chunk recomputed)."""
    print(f"bhchem: note: {line}", file=sys.stderr)


def _check_plot_output(path: str) -> str:
    """Refuse a plot output that cannot be written, before anything is computed."""
    path = os.path.abspath(path)
    ext = os.path.splitext(path)[1].lower().lstrip(".")
    if ext not in ("png", "pdf", "svg"):
        raise BhchemError(f"output {path}: use a .png, .pdf or .svg file name")
    if os.path.isdir(path):
        raise BhchemError(f"output {path} is a folder; give a file name")
    if os.path.isdir(table_path(path)):
        raise BhchemError(f"output {path}: its data file {table_path(path)} would replace "
                          f"a folder; give another name")
    check_writable_folder(os.path.dirname(path), f"output {path}")
    return path


def cmd_plot(args) -> int:
    _check_plot_output(args.output)
    adjust_check(args.xlim, args.ylim, args.width)
    th = _bound(args)
    kw = {}
    if args.pressure:
        # with --vary, relative pressures are resolved at each value's own critical point
        P = list(args.pressure) if args.vary else [parse_pressure(v, th) for v in args.pressure]
        if args.kind == "cp":
            kw["pressure"] = P[0]
        elif args.kind in ("gt", "tr"):
            kw["pressures"] = P
        else:
            raise BhchemError(f"--pressure does not apply to a '{args.kind}' plot")
    if args.temperature:
        if args.kind != "pv":
            raise BhchemError(f"--temperature applies to pv plots, not '{args.kind}'")
        kw["temperatures"] = list(args.temperature) if args.vary else \
            [resolve_temperature(th, T) for T in args.temperature]
    if args.show_excluded:
        if args.kind not in ("gt", "tr"):
            raise BhchemError(f"--show-excluded applies to gt and tr plots, not '{args.kind}'")
        kw["show_excluded"] = True
    vary = parse_vary(args.vary) if args.vary else None
    if vary and args.show_excluded:
        raise BhchemError("--show-excluded draws one family's excluded states; not with --vary")
    res = make_figure(th, args.kind, xlim=args.xlim, ylim=args.ylim, width=args.width,
                      vary=vary, reduced_units=args.reduced, **kw)
    with output_lock(args.output):
        for note in clean_stale(args.output) + clean_stale(table_path(args.output)):
            _note(f"{note} (left by an interrupted run)")
        path = save(res, args.output, table=True)
    print(f"wrote {path} and its data {table_path(path)}")
    return 0


def cmd_report(args) -> int:
    th = _bound(args)
    progress = _stage_progress(args)
    try:
        path = write_report(th, args.output, digits=args.digits, force=args.force,
                            progress=progress, include_unphysical=args.include_unphysical,
                            notify=_note, topology=args.topology)
    except OSError as exc:  # e.g. disk full: nothing was moved into place
        print(f"bhchem: error: the report {args.output} was not written ({exc}); any "
              f"earlier folder there is untouched", file=sys.stderr)
        return 1
    print(f"wrote {path}/ (report.md, tables.tex, results.json, figures)")
    return 0


def cmd_demo(args) -> int:
    (fam,) = load_family_file(FAMILY_FILE)
    th = bind(fam)
    out = args.output or "bhchem-demo"
    print(f"demo: {fam.name} ({fam.summary})")
    print(f"      parameters {', '.join(f'{k}={v:g}' for k, v in th.values.items())}")
    path = write_report(th, out, force=True, progress=_stage_progress(args), notify=_note)
    print(f"wrote {path}/ -- open report.md; figures as PNG and PDF, tables.tex for a paper")
    return 0


def cmd_scan(args) -> int:
    if args.checks < 0:
        raise InvalidArgumentError(f"--checks {args.checks}: give a count of 0 or more")
    axes = [parse_grid(g) for g in args.grid]
    fixed = {k: parse_number(v, k) for k, v in parse_assignments(args.param).items()}
    out = os.path.abspath(args.output)
    if os.path.lexists(out) and not os.path.isdir(out):
        raise BhchemError(f"output folder {out} exists and is not a folder; choose another name")
    check_writable_folder(os.path.dirname(out), f"output folder {out}")
    if os.path.isdir(out) and not os.access(out, os.W_OK | os.X_OK):
        raise BhchemError(f"output folder {out}: the folder is not writable")
    executor, client = None, None
    if args.scheduler:
        try:
            from distributed import Client  # lazy: optional extra, only with --scheduler
        except ImportError:
            raise BhchemError("--scheduler needs Dask: pip install 'bhchem[dask]'") from None
        try:
            client = executor = Client(args.scheduler, timeout=args.scheduler_timeout)
        except (OSError, TimeoutError) as exc:
            raise BhchemError(f"cannot reach the Dask scheduler at {args.scheduler}: {exc}") from None
    try:
        family_file = (args.family_file or [None])[-1]
        doc = scan(args.family, axes, fixed, args.output, family_file=family_file,
                   workers=args.workers, executor=executor, quiet=args.quiet,
                   refine=args.refine, notify=_note, conditions=args.conditions,
                   without=_without(args), method=args.method, checks=args.checks)
    except OSError as exc:  # e.g. disk full or a read-only folder: say what is missing
        print(f"bhchem: error: the atlas table in {args.output} was not written ({exc}); "
              f"a rerun reuses any finished chunks in {args.output}/chunks",
              file=sys.stderr)
        return 1
    finally:
        if client is not None:
            client.close()
    figure_error = doc.get("figure_error")
    files = "atlas.csv, atlas.json" + ("" if figure_error else ", atlas.png")
    print(f"wrote {args.output}/{files}: {len(doc['rows'])} points, "
          f"{doc['distinct_scale_free_points']} distinct scale-free points, structures "
          f"{', '.join(doc['structures'])}; {doc['errors']} failed point(s)")
    print(f"note: {doc['scale_invariance']}")
    if figure_error:
        print(f"bhchem: error: {figure_error}", file=sys.stderr)
        return 1
    return 0


def _stage_progress(args):
    if getattr(args, "quiet", False) or not sys.stderr.isatty():
        return None

    def show(stage):
        sys.stderr.write(f"\r{stage:<50}")
        sys.stderr.flush()
    return show


def _add_family_args(p, json_help="machine-readable output", with_json=True):
    p.add_argument("family", help="family name (see 'bhchem families')")
    p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="parameter value (repeatable, or comma-separated)")
    add_condition_args(p)
    if with_json:
        p.add_argument("--json", action="store_true", help=json_help)


def build_parser() -> argparse.ArgumentParser:
    common = _Parser(add_help=False)
    common.add_argument("--family-file", action="append", metavar="PATH",
                        help="load families from a plug-in file first (repeatable); a .py "
                             "file is Python and runs with your rights: load only files "
                             "you trust (a .toml file is read by a safe parser and runs "
                             "no code)")
    parser = _Parser(prog="bhchem", description="Black hole chemistry in the extended "
                     "phase space: derive, verify and analyse AdS black hole thermodynamics.",
                     parents=[common])
    parser.add_argument("--version", action="version", version=f"bhchem {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("families", parents=[common], help="list the available families")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_families)

    p = sub.add_parser("show", parents=[common],
                       help="derived quantities, equation of state, first-law and Smarr verdicts")
    _add_family_args(p)
    p.set_defaults(func=cmd_show)

    p = sub.add_parser("critical", parents=[common],
                       help="every critical point, with kind, physical flag and residuals")
    _add_family_args(p)
    p.set_defaults(func=cmd_critical)

    p = sub.add_parser("exponents", parents=[common],
                       help="critical points with exact and fitted critical exponents")
    _add_family_args(p)
    p.set_defaults(func=cmd_critical)

    p = sub.add_parser("isobar", parents=[common],
                       help="branches, swallowtails and transitions at one pressure")
    _add_family_args(p)
    p.add_argument("--pressure", required=True, metavar="P",
                   help="pressure, absolute (0.002) or relative to a critical point (0.5Pc)")
    p.set_defaults(func=cmd_isobar)

    p = sub.add_parser("compare", parents=[common],
                       help="both ensembles side by side: fixed charge (-p Q=1) and fixed "
                            "potential (-p Phi_Q=0.5) at one pressure")
    _add_family_args(p)
    p.add_argument("--pressure", metavar="P",
                   help="pressure, absolute or relative to a critical point of the "
                        "fixed-charge ensemble (0.5Pc); default 0.5Pc, or the family's "
                        "typical pressure when it has no critical point")
    p.add_argument("-o", "--output", metavar="FILE",
                   help="also draw the two-panel G-T figure (.png, .pdf or .svg)")
    p.set_defaults(func=cmd_compare)

    p = sub.add_parser("phases", parents=[common],
                       help="phase diagram: lines, critical and triple points, phase graph")
    _add_family_args(p)
    p.add_argument("--pressure-range", nargs=2, metavar=("P1", "P2"),
                   help="pressure range (absolute or like 0.01Pc 3Pc); default from the "
                        "family's scales")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_phases)

    p = sub.add_parser("plot", parents=[common], help="a figure: pv, gt, pt, tr or cp")
    p.add_argument("kind", choices=KINDS, help="pv (isotherms), gt (G-T isobars), pt (phase "
                   "diagram), tr (T-r isobars), cp (heat capacity)")
    _add_family_args(p, with_json=False)
    p.add_argument("-o", "--output", required=True, metavar="FILE",
                   help="output file (.png, .pdf or .svg)")
    p.add_argument("--pressure", action="append", metavar="P",
                   help="pressure(s) for gt/tr/cp (absolute or like 0.5Pc; repeatable)")
    p.add_argument("--temperature", action="append", metavar="T",
                   help="isotherm temperature(s) for pv (absolute or like 0.9Tc; repeatable)")
    p.add_argument("--show-excluded", action="store_true",
                   help="gt, tr: draw the states the conditions exclude, faintly, labelled by "
                        "the condition")
    p.add_argument("--vary", metavar="NAME=V1,V2,...",
                   help="one curve family per value of a parameter, on one axes (or a grid "
                        "NAME=START:STOP:N); relative T and P (0.9Tc, 0.5Pc) at each value's "
                        "own critical point")
    p.add_argument("--reduced", action="store_true",
                   help="in units of the critical point: v/v_c, P/P_c, T/T_c, r/r_c; "
                        "G/(T_c S_c) (gt) and C_P/S_c (cp)")
    p.add_argument("--xlim", metavar="A:B", help="x-axis range of every panel")
    p.add_argument("--ylim", metavar="A:B", help="y-axis range of every panel")
    p.add_argument("--width", metavar="column|page|INCHES",
                   help="figure width: a journal column (3.4 in), a page (7.0 in) or inches")
    p.set_defaults(func=cmd_plot)

    p = sub.add_parser("report", parents=[common],
                       help="report bundle: figures, report.md, tables.tex, results.json")
    _add_family_args(p, with_json=False)
    p.add_argument("-o", "--output", required=True, metavar="DIR", help="output folder")
    p.add_argument("--digits", type=int, default=6, help="significant digits in tables (6)")
    p.add_argument("--force", action="store_true", help="replace an existing folder")
    p.add_argument("--include-unphysical", action="store_true",
                   help="list unphysical critical points in tables.tex too (default: "
                        "physical only; results.json and report.md list all)")
    p.add_argument("--topology", action="store_true",
                   help="add thermodynamic topology, the free-energy landscape and the "
                        "first-passage time (figures tau, landscape, first-passage)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_report)

    p = sub.add_parser("scan", parents=[common],
                       help="parameter atlas: structure across a grid of couplings")
    p.add_argument("family", help="family name")
    p.add_argument("--grid", action="append", required=True, metavar="NAME=START:STOP:N",
                   help="grid axis (repeatable, up to 3); NAME=log:START:STOP:N for log spacing")
    p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="fixed parameter values")
    p.add_argument("-o", "--output", required=True, metavar="DIR",
                   help="output folder (rerun the same command to resume)")
    p.add_argument("--workers", type=int, default=1, help="local worker processes (1)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="run on a Dask cluster (tcp://...)")
    p.add_argument("--scheduler-timeout", metavar="DURATION", default="10s",
                   help="how long to try to reach the Dask scheduler (network I/O; 10s)")
    add_condition_args(p)
    p.add_argument("--method", choices=("auto", "diagrams", "events"), default="auto",
                   help="events: locate the structure events along the first axis (traced "
                        "along the second in 2D) and compute full diagrams for one point per "
                        "interval or cell plus a check sample; diagrams: a full diagram per "
                        "point; auto (default): events for a linear 1D or 2D grid of "
                        "continuous couplings with 16 or more points")
    p.add_argument("--checks", type=int, default=8,
                   help="with events: how many grid points (seeded sample) also get a full "
                        "diagram as a check of their interval's structure (8)")
    p.add_argument("--refine", type=int, default=8,
                   help="bisection steps per boundary (8; 0: bracket by the grid only)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_scan)

    p = sub.add_parser("demo", parents=[common],
                       help="the whole job on a bundled invented scenario")
    p.add_argument("-o", "--output", metavar="DIR", help="output folder (bhchem-demo)")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_demo)

    helpers = {"bound": _bound, "parse_pressure": parse_pressure, "BhchemError": BhchemError,
               "condition_args": add_condition_args}
    register(sub, common, helpers)
    register_topology(sub, common, helpers)
    register_metric(sub, common, helpers)
    return parser


def _one_line_warning(message, category, filename, lineno, file=None, line=None):
    """Warnings reach a command-line user as one line each, without source excerpts."""
    print(f"bhchem: warning: {message}", file=sys.stderr)


def main(argv=None) -> int:
    """Entry point of the ``bhchem`` console script; returns the exit code."""
    with warnings.catch_warnings():
        warnings.showwarning = _one_line_warning
        return _main(argv)


def _main(argv) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if not getattr(args, "command", None):
            parser.print_help()
            return EXIT_USAGE
        _load_files(args)
        return args.func(args)
    except _UsageError as exc:
        print(f"bhchem: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except BhchemError as exc:
        print(f"bhchem: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("bhchem: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # e.g. piped into head
        return 0
    except Exception as exc:  # a bug, not bad input: still one line unless debugging
        if os.environ.get("BHCHEM_DEBUG"):
            raise
        print(f"bhchem: internal error: {type(exc).__name__}: {exc} "
              f"(set BHCHEM_DEBUG=1 for the traceback, and please report it)", file=sys.stderr)
        return 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
