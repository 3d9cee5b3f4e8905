"""Command-line subcommands of issue 16: ``topology`` and ``landscape``.

Wired into ``bhchem`` by one call in :mod:`bhchem.cli.main`, like
:mod:`bhchem.cli.analyses`.  Bad input raises a :class:`~bhchem.errors.BhchemError` (one
line, exit 2).  With ``--json`` the document goes to stdout and any "wrote FILE" message
to stderr.
"""
from __future__ import annotations

import math
import sys

from bhchem.errors import BhchemError
from bhchem.present.serialize import to_json
from bhchem.present.plots import save, table_path
from bhchem.analysis.critical import find_critical_points
from bhchem.workflows.topology import default_pressure, landscape_run
from bhchem.analysis.topology import critical_point_charge, thermodynamic_topology
from bhchem.present.topology_plots import plot_first_passage, plot_landscape, plot_tau
from bhchem.present.topology_text import (landscape_json, landscape_text, topology_json,
                                          topology_text)


def _number(text: str, what: str, positive: bool = True) -> float:
    try:
        value = float(text)
    except (TypeError, ValueError):
        raise BhchemError(f"{what} {text!r} is not a number") from None
    if not math.isfinite(value) or (positive and value <= 0):
        raise BhchemError(f"{what} {text!r} must be a {'positive ' if positive else ''}"
                          f"finite number")
    return value


def _pressure(args, th, parse_pressure) -> float:
    """--pressure (0 allowed for topology: the flat limit), default 0.5 P_c or the family's
    typical pressure."""
    if args.pressure is None:
        return default_pressure(th)
    if args.pressure.strip() in ("0", "0.0") and args.command == "topology":
        return 0.0
    return parse_pressure(args.pressure, th)


def _emit(args, doc, text, figures, th) -> int:
    doc = {**doc, "admissibility": th.admissibility.to_dict()}  # the states it rests on
    if not th.admissibility.is_default:
        text = f"{text}\nstates: {th.admissibility.label()}"
    family = th.family
    for path, make in figures:
        if path:
            out = save(make(), path, table=True)
            print(f"wrote {out} and its data {table_path(out)}",
                  file=sys.stderr if args.json else sys.stdout)
    print(to_json(doc, family=family) if args.json else text)
    return 0


def register(sub, common, helpers: dict) -> None:
    """Add ``topology`` and ``landscape`` to the subparsers ``sub`` (see
    :func:`bhchem.cli.analyses.register` for ``helpers``)."""
    bound = helpers["bound"]
    parse_pressure = helpers["parse_pressure"]

    def cmd_topology(args) -> int:
        th = bound(args)
        P = _pressure(args, th, parse_pressure)
        taus = [_number(t, "tau") for t in (args.tau or [])]
        res = thermodynamic_topology(th, P, taus=taus)
        crit = [(cp, critical_point_charge(th, cp)) for cp in find_critical_points(th).points]
        return _emit(args, topology_json(res, crit), topology_text(res, crit),
                     [(args.output, lambda: plot_tau(res))], th)

    def cmd_landscape(args) -> int:
        th = bound(args)
        P = _pressure(args, th, parse_pressure)
        T_E = _number(args.temperature, "temperature") if args.temperature is not None else None
        run = landscape_run(th, P, T_E, start=args.start, target=args.target)
        ls, fp = run.landscape, run.passage
        figs = [(args.output, lambda: plot_landscape(ls))]
        if args.distribution:
            if fp is None:
                raise BhchemError("--distribution: no first passage at these T_E, P "
                                  "(no barrier between two wells)")
            figs.append((args.distribution, lambda: plot_first_passage(fp)))
        return _emit(args, landscape_json(ls, fp, run.note), landscape_text(ls, fp, run.note),
                     figs, th)

    def family_args(p, figure_help):
        p.add_argument("family", help="family name (see 'bhchem families')")
        p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                       help="parameter value (repeatable, or comma-separated)")
        if "condition_args" in helpers:
            helpers["condition_args"](p)
        p.add_argument("--json", action="store_true", help="machine-readable output")
        p.add_argument("-o", "--output", metavar="FIG", help=figure_help + " (.png, .pdf, .svg)")
        p.add_argument("--pressure", metavar="P",
                       help="pressure, absolute or like 0.5Pc (default 0.5 P_c, or the "
                            "family's typical pressure without a critical point)")

    p = sub.add_parser("topology", parents=[common],
                       help="winding numbers, topological number W(tau), class, critical "
                            "point charges")
    family_args(p, "tau(r+) figure with the zeros marked by their winding numbers")
    p.add_argument("--tau", action="append", metavar="TAU",
                   help="an inverse temperature to sample as well (repeatable)")
    p.set_defaults(func=cmd_topology)

    p = sub.add_parser("landscape", parents=[common],
                       help="free-energy landscape, mean first-passage time, Kramers rate")
    family_args(p, "landscape figure G_L(r+)")
    p.add_argument("--temperature", metavar="T_E",
                   help="ensemble temperature (default: the first-order or Hawking-Page "
                        "transition temperature at this P)")
    p.add_argument("--from", dest="start", choices=("auto", "small", "large"), default="auto",
                   help="start well (default: the small one, unless it is the domain edge)")
    p.add_argument("--target", choices=("barrier", "well"), default="barrier",
                   help="absorb at the barrier top (default, Li, Zhang & Wang 2020) or at "
                        "the other well")
    p.add_argument("--distribution", metavar="FIG",
                   help="figure of the first-passage-time distribution")
    p.set_defaults(func=cmd_landscape)
