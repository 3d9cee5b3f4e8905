"""The ``bhchem metric`` subcommand: the metric route of a family (issue 15).

Wired into ``bhchem`` by one call in :mod:`bhchem.cli.main`, like
:mod:`bhchem.cli.analyses`.  Bad input raises a :class:`~bhchem.errors.BhchemError` (one
line, exit 2); with ``--json`` the document goes to stdout and any "wrote FILE" message to
stderr.
"""
from __future__ import annotations

import sys
import warnings

from bhchem.analysis.critical import find_critical_points
from bhchem.analysis.metric_route import (compare_routes, diagnose_metric,
                                          diagram_photon_jumps, photon_sphere,
                                          photon_sphere_jumps)
from bhchem.analysis.phases import phase_diagram
from bhchem.declare.registry import get_family
from bhchem.errors import BhchemError, BhchemWarning
from bhchem.present.metric_report import metric_json, metric_text, plot_photon_jumps
from bhchem.present.plots import save, table_path
from bhchem.present.serialize import to_json


def register(sub, common, helpers: dict) -> None:
    """Add ``metric`` to the subparsers ``sub`` (``helpers['bound']``: args -> bound family)."""
    bound = helpers["bound"]

    def cmd_metric(args) -> int:
        # the warnings of the analyses are part of the printed result (text and JSON)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", BhchemWarning)
            return _metric(args)

    def _metric(args) -> int:
        th = bound(args)
        if th.family.metric is None:
            raise BhchemError(f"family {th.family.name} declares no metric function (declare "
                              f"one with bhchem.declare.from_metric or a [metric] table)")
        diag = diagnose_metric(th)
        jumps = photon_sphere_jumps(th)   # the line of the lowest critical point that has one
        cpd = jumps.critical_point
        if not cpd:
            std = [c for c in find_critical_points(th).physical
                   if c.kind == "standard" and c.converged]
            cp = min(std, key=lambda c: c.P) if std else None
            cpd = {"x_c": cp.x, "P_c": cp.P} if cp is not None else {}
        ps = photon_sphere(th, cpd["x_c"], cpd["P_c"]) if cpd else None
        comparison = compare_routes(th) if args.compare else None
        lines = diagram_photon_jumps(th, phase_diagram(th)) if args.all_lines else None
        if args.output:
            path = save(plot_photon_jumps(jumps), args.output, table=True)
            print(f"wrote {path} and its data {table_path(path)}",
                  file=sys.stderr if args.json else sys.stdout)
        if args.json:
            print(to_json(metric_json(th, diag, ps, jumps, comparison, lines),
                          family=get_family(args.family)))
        else:
            print(metric_text(th, diag, ps, jumps, comparison, lines))
        return 0

    p = sub.add_parser("metric", parents=[common],
                       help="metric route: first-law diagnosis of T from the surface gravity, "
                            "photon sphere, its jumps along the coexistence line")
    p.add_argument("family", help="family name (see 'bhchem families')")
    p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="parameter value (repeatable, or comma-separated)")
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.add_argument("--compare", action="store_true",
                   help="also compare the routes: surface-gravity T with the first-law "
                        "entropy against the area law with T = dM/dS (critical point, "
                        "coexistence temperature at 0.5 P_c)")
    p.add_argument("--all-lines", action="store_true",
                   help="also the jumps across every first-order line of the phase diagram "
                        "(computes the phase diagram: seconds)")
    p.add_argument("-o", "--output", metavar="FIG",
                   help="figure of Delta r_ps and Delta lambda along the coexistence line "
                        "(.png, .pdf or .svg)")
    p.set_defaults(func=cmd_metric)
