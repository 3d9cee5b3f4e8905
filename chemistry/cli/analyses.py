"""Command-line subcommands for the analyses of issue 7: ``expansion``, ``engine``,
``curvature``.

Wired into ``bhchem`` by one call in :mod:`bhchem.cli`::

    from bhchem.cli.analyses import register
    register(sub, common, {"bound": _bound, "parse_pressure": parse_pressure,
                           "BhchemError": BhchemError})

``sub`` is the argparse subparsers object, ``common`` the parent parser carrying
``--family-file``.  Every handler takes the parsed ``args`` and returns an exit code;
bad input raises a :class:`~bhchem.errors.BhchemError` (one line, exit 2 in
``bhchem``'s main).  With ``--json`` the document goes to stdout and any
"wrote FILE" message to stderr, so the JSON stays parseable.
"""
from __future__ import annotations

import math
import sys

from bhchem.errors import BhchemError
from bhchem.present.serialize import to_json
from bhchem.present.plots import save, table_path
from bhchem.declare.registry import get_family
from bhchem.analysis.expansion import joule_thomson_expansion
from bhchem.present.analysis_plots import plot_expansion
from bhchem.present.analysis_text import expansion_json, expansion_text
from bhchem.analysis.engines import CycleError, analyze_cycle
from bhchem.analysis.curvature import critical_amplitude, curvature_map
from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.figure_data import cycle_curves
from bhchem.present.analysis_text import curvature_json, curvature_text, engine_json, engine_text
from bhchem.present.analysis_plots import plot_curvature, plot_cycle


def _family_args(p, figure_help: str, condition_args=None):
    p.add_argument("family", help="family name (see 'bhchem families')")
    p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="parameter value (repeatable, or comma-separated)")
    if condition_args is not None:
        condition_args(p)
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.add_argument("-o", "--output", metavar="FIG", help=figure_help + " (.png, .pdf or .svg)")


def _number(text: str, what: str) -> float:
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise BhchemError(f"{what} {text!r} is not a number") from None
    if not math.isfinite(value):
        raise BhchemError(f"{what} {text!r} must be finite")
    return value


def parse_cycle(text: str, parse_pressure=None, th=None) -> list:
    """The corners of ``--cycle``: 'P1,V1 P2,V2 ...' -> [(P1, V1), ...].

    Parameters
    ----------
    text : str
        Corners separated by spaces (or semicolons), each ``P,V``.
    parse_pressure : callable, optional
        ``(text, th) -> float``, so that pressures may be relative ('0.5Pc'); default
        :class:`float`.
    th : Thermodynamics, optional
        Passed to ``parse_pressure``.

    Returns
    -------
    list of (float, float)

    Raises
    ------
    CycleError
        For a malformed corner or fewer than three corners.
    """
    items = str(text).replace(";", " ").split()
    out = []
    for item in items:
        p, sep, v = item.partition(",")
        if not sep or not p.strip() or not v.strip():
            raise CycleError(f"cycle corner {item!r} must look like P,V (e.g. 0.01,120)")
        try:
            P = parse_pressure(p, th) if parse_pressure is not None else float(p)
            V = float(v)
        except ValueError:
            raise CycleError(f"cycle corner {item!r}: P and V must be numbers") from None
        out.append((float(P), V))
    if len(out) < 3:
        raise CycleError(f"--cycle needs at least three corners 'P1,V1 P2,V2 P3,V3 ...', "
                         f"got {len(out)}")
    return out


def _finish(args, doc: dict, text: str, figure, th=None) -> int:
    if th is not None:  # the selection of states the result rests on
        doc = {**doc, "admissibility": th.admissibility.to_dict(),
               "ensemble": th.family.ensemble_record()}
        if not th.admissibility.is_default:
            text = f"{text}\nstates: {th.admissibility.label()}"
        if th.family.ensemble:
            text = f"{text}\nensemble: {th.family.ensemble_label()}"
    if args.output:
        path = save(figure(), args.output, table=True)
        print(f"wrote {path} and its data {table_path(path)}",
              file=sys.stderr if args.json else sys.stdout)
    if args.json:
        # one serializer: non-finite -> null, sorted keys, the family's conventions added
        print(to_json(doc, family=th.family if th is not None else get_family(args.family)))
    else:
        print(text)
    return 0


def register(sub, common, helpers: dict) -> None:
    """Add the ``expansion``, ``engine`` and ``curvature`` subcommands to ``sub``.

    Parameters
    ----------
    sub : argparse subparsers object
    common : argparse.ArgumentParser
        Parent parser (``--family-file``).
    helpers : dict
        ``'bound'`` (args -> Thermodynamics), ``'parse_pressure'`` ((text, th) -> float),
        ``'BhchemError'`` (the exception class for bad input).
    """
    bound = helpers["bound"]
    parse_pressure = helpers["parse_pressure"]

    def cmd_expansion(args) -> int:
        th = bound(args)
        masses = None
        if args.masses:
            masses = [_number(m, "mass") for m in args.masses]
            bad = [m for m in masses if m <= 0]
            if bad:
                raise BhchemError(f"masses must be positive (M is the enthalpy), got {bad[0]:g}")
        Pmax = parse_pressure(args.pressure_max, th) if args.pressure_max else None
        res = joule_thomson_expansion(th, masses=masses, pressure_max=Pmax)
        return _finish(args, expansion_json(res), expansion_text(res),
                       lambda: plot_expansion(res, th), th)

    def cmd_engine(args) -> int:
        th = bound(args)
        corners = parse_cycle(args.cycle, parse_pressure, th)
        res = analyze_cycle(th, corners)
        return _finish(args, engine_json(res), engine_text(res),
                       lambda: plot_cycle(cycle_curves(th, res)), th)

    def cmd_curvature(args) -> int:
        th = bound(args)
        cmap = None
        if args.output:
            cmap = curvature_map(th)
            amp = cmap.amplitude
        else:
            has_cp = any(c.kind == "standard" for c in find_critical_points(th).physical)
            amp = critical_amplitude(th) if has_cp else None
        return _finish(args, curvature_json(th, amp), curvature_text(th, amp),
                       lambda: plot_curvature(cmap, th), th)

    p = sub.add_parser("expansion", parents=[common],
                       help="Joule-Thomson expansion: isenthalps, inversion curve, T_i,min/T_c")
    _family_args(p, "figure of the isenthalps and the inversion curve", helpers["condition_args"])
    p.add_argument("--masses", nargs="+", metavar="M",
                   help="enthalpies of the isenthalps (default: those meeting the inversion "
                        "curve at evenly spread pressures)")
    p.add_argument("--pressure-max", metavar="P",
                   help="top of the pressure range (absolute or like 50Pc); default from "
                        "where the isenthalps meet the inversion curve")
    p.set_defaults(func=cmd_expansion)

    p = sub.add_parser("engine", parents=[common],
                       help="heat engine cycle in the P-V plane: work, heat, efficiency, Carnot")
    _family_args(p, "figure of the cycle in the P-V plane", helpers["condition_args"])
    p.add_argument("--cycle", required=True, metavar='"P1,V1 P2,V2 ..."',
                   help="corners in order of traversal (P absolute or like 0.5Pc; V the "
                        "thermodynamic volume); sides must be isobars, isochores, isotherms "
                        "or adiabats")
    p.set_defaults(func=cmd_engine)

    p = sub.add_parser("curvature", parents=[common],
                       help="Ruppeiner curvature: R_N sign map and critical amplitude")
    _family_args(p, "sign map of R_N on the T-v plane", helpers["condition_args"])
    p.set_defaults(func=cmd_curvature)
