"""Command line: ``bhchem COMMAND ...``.

Every command accepts ``--family-file PATH`` (repeatable) to load user families
first, and ``-p NAME=VALUE`` (repeatable, or comma-separated) for parameters.
Bad input ends with one line on stderr and exit code 2, never a traceback.
"""
from __future__ import annotations

import argparse
import json
import os
import sys

from .errors import BhchemError

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
    from .registry import load_family_file
    for path in getattr(args, "family_file", None) or []:
        load_family_file(path)


def _bound(args):
    from .compiled import bind
    from .registry import get_family
    family = get_family(args.family)
    return bind(family, **parse_assignments(args.param))


# -- commands ---------------------------------------------------------------
def cmd_families(args) -> int:
    from .registry import available_families
    fams = available_families()
    if args.json:
        out = {name: {"summary": f.summary, "reference": f.reference,
                      "parameters": {p.name: {"default": p.default,
                                              "dimension": str(p.length_dimension),
                                              "domain": p.domain.describe(p.name)}
                                     for p in f.all_parameters}}
               for name, f in fams.items()}
        print(json.dumps(out, indent=2, sort_keys=True))
        return 0
    width = max(len(n) for n in fams)
    for name, f in fams.items():
        params = ", ".join(f"{p.name}={p.default:g}" for p in f.all_parameters) or "none"
        print(f"{name:<{width}}  {f.summary}")
        print(f"{'':<{width}}  parameters: {params}")
    return 0


def cmd_show(args) -> int:
    from .summary import show_json, show_text
    th = _bound(args)
    if args.json:
        print(json.dumps(show_json(th), indent=2, sort_keys=True))
    else:
        print(show_text(th))
    return 0


def cmd_critical(args) -> int:
    from .critical_report import critical_json, critical_text
    th = _bound(args)
    doc = critical_json(th, with_exponents=args.command == "exponents")
    if args.json:
        print(json.dumps(doc, indent=2, sort_keys=True))
    else:
        print(critical_text(doc))
    return 0


def _add_family_args(p, json_help="machine-readable output"):
    p.add_argument("family", help="family name (see 'bhchem families')")
    p.add_argument("-p", "--param", action="append", metavar="NAME=VALUE",
                   help="parameter value (repeatable, or comma-separated)")
    p.add_argument("--json", action="store_true", help=json_help)


def build_parser() -> argparse.ArgumentParser:
    common = _Parser(add_help=False)
    common.add_argument("--family-file", action="append", metavar="PATH",
                        help="load families from a plug-in file first (repeatable)")
    parser = _Parser(prog="bhchem", description="Black hole chemistry in the extended "
                     "phase space: derive, verify and analyse AdS black hole thermodynamics.",
                     parents=[common])
    from . import __version__
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
    return parser


def main(argv=None) -> int:
    """Entry point of the ``bhchem`` console script; returns the exit code."""
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
