"""The report bundle: figures, report.md, tables.tex and results.json, written atomically.

:func:`write_report` computes everything (verdicts, critical points with exponents,
the phase diagram), draws every figure, and writes the bundle into a temporary
folder beside the destination, renaming it into place only when everything
succeeded: a failed run leaves no half-written folder.

``results.json`` carries provenance: the tool version, the family's source file and
its SHA-256, the parameters, the conventions, the date (UTC; fixed by the
``SOURCE_DATE_EPOCH`` environment variable for reproducible output) and every
residual.  JSON is written with sorted keys and Python's shortest round-trip float
representation, so the same inputs give the same bytes.
"""
from __future__ import annotations

import datetime as _dt
import hashlib
import math
import os

from bhchem.version import __version__
from bhchem.core.compiled import Thermodynamics
from bhchem.conventions import convention_record
from bhchem.errors import BhchemError
from bhchem.fileio import atomic_directory, atomic_write
from bhchem.present.serialize import jsonable, to_json

FIGURES = (("pv", "P-v isotherms with the equal-area construction"),
           ("gt", "G-T isobars"),
           ("pt", "P-T phase diagram"),
           ("tr", "T-r isobars"),
           ("cp", "heat capacity C_P along an isobar"))


def _finite(x):
    """JSON-safe numbers (kept for old callers): see :func:`bhchem.present.serialize.jsonable`."""
    return jsonable(x)


def dumps(doc, family=None) -> str:
    """Deterministic JSON file text: :func:`bhchem.present.serialize.to_json` plus a newline
    (sorted keys, shortest round-trip floats, non-finite numbers as null, ``convention``
    added when missing)."""
    return to_json(doc, family=family) + "\n"


def _now() -> str:
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    t = _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc) if epoch \
        else _dt.datetime.now(_dt.timezone.utc)
    return t.replace(microsecond=0).isoformat()


def provenance(th: Thermodynamics) -> dict:
    src = th.family.source or ""
    digest = None
    if src and os.path.isfile(src):
        with open(src, "rb") as fh:
            digest = hashlib.sha256(fh.read()).hexdigest()
    return {"tool": "bhchem", "version": __version__, "family": th.family.name,
            "family_source": os.path.basename(src) if src else None,
            "family_source_sha256": digest, "family_reference": th.family.reference,
            "parameters": dict(th.values), "date": _now()}


def compute_results(th: Thermodynamics, progress=None) -> tuple[dict, object]:
    """Every number of the report, as a JSON-ready dict, and the phase diagram."""
    from bhchem.present.critical_report import critical_json
    from bhchem.analysis.phases import diagram_json, phase_diagram
    from bhchem.present.summary import show_json
    show = show_json(th)
    if progress:
        progress("critical points and exponents")
    crit = critical_json(th, with_exponents=True)
    if progress:
        progress("phase diagram")
    pd = phase_diagram(th)
    phases = diagram_json(pd)
    doc = {
        "provenance": provenance(th),
        "convention": convention_record(th.family),
        "family": {"name": th.family.name, "summary": th.family.summary,
                   "reference": th.family.reference},
        "parameters": show["parameters"],
        "quantities": show["quantities"],
        "equation_of_state": show["equation_of_state"],
        "first_law": show["first_law"],
        "smarr": show["smarr"],
        "critical": {k: crit[k] for k in ("completeness", "method", "message", "converged",
                                          "critical_points")},
        "phases": phases,
    }
    return doc, pd


# -- LaTeX tables ------------------------------------------------------------------------
def tex_math_number(x, digits: int) -> str:
    """The body of a math-mode number to ``digits`` significant digits, without dollars:
    ``1.23\\times10^{-4}``, ``0.5`` (never the text form ``1.23e-04``)."""
    s = f"{x:.{digits}g}"
    if "e" in s:
        mant, exp = s.split("e")
        return f"{mant}\\times10^{{{int(exp)}}}"
    return s


def tex_number(x, digits: int) -> str:
    """A number for LaTeX to ``digits`` significant digits ($1.23\\times10^{-4}$)."""
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "--"
    return f"${tex_math_number(x, digits)}$"


def tex_fitted(value, uncertainty) -> str:
    """A fitted value with its standard error, e.g. ``$0.5000 \\pm 1\\times10^{-10}$``."""
    if value is None or not math.isfinite(value):
        return "--"
    if uncertainty is None or not math.isfinite(uncertainty):
        return f"${value:.4f}$"
    return f"${value:.4f} \\pm {tex_math_number(uncertainty, 1)}$"


def _tex_escape(s: str) -> str:
    return (s.replace("\\", r"\textbackslash{}").replace("_", r"\_").replace("&", r"\&")
            .replace("%", r"\%").replace("#", r"\#"))


def _tex_symbol(name: str) -> str:
    """A parameter name in math mode: one letter stays italic (``Q``), a longer name is
    upright (``\\mathrm{alpha}``), so a coupling named alpha is never typeset like the
    exponent $\\alpha$."""
    base, sep, sub = name.partition("_")
    body = base if len(base) <= 1 else f"\\mathrm{{{base}}}"
    return f"{body}_{{{sub}}}" if sep else body


#: the definitions of the critical exponents (t = T/T_c - 1), as in Kubiznak & Mann,
#: JHEP 07 (2012) 033 (arXiv:1205.0559), Sec. 3
EXPONENT_DEFINITIONS = {
    "alpha": "C_V ~ |t|^-alpha",
    "beta": "eta = (v_l - v_s)/v_c ~ |t|^beta",
    "gamma": "kappa_T ~ |t|^-gamma",
    "delta": "|P - P_c| ~ |v - v_c|^delta at T = T_c",
}
_EXPONENT_TEX = (r"$C_V\propto|t|^{-\alpha}$, $\eta=(v_l-v_s)/v_c\propto|t|^{\beta}$, "
                 r"$\kappa_T\propto|t|^{-\gamma}$, $|P-P_c|\propto|v-v_c|^{\delta}$ at "
                 r"$T=T_c$; $t=T/T_c-1$")


def tables_tex(doc: dict, digits: int = 6, include_unphysical: bool = False) -> str:
    """booktabs tables: critical data, scale-free values, exponents, triple points.

    Parameters
    ----------
    doc : dict
        The ``results.json`` document.
    digits : int
        Significant digits.
    include_unphysical : bool
        List every solution of the critical conditions (default: only the physical ones,
        with a comment line saying how many were left out).  Rows keep the numbering of
        ``results.json`` and ``report.md``.
    """
    fam = doc["family"]["name"]
    params = ", ".join(f"${_tex_symbol(k)} = {tex_math_number(v['value'], 6)}$"
                       for k, v in doc["parameters"].items())
    every = list(enumerate(doc["critical"]["critical_points"], 1))
    cps = [(i, cp) for i, cp in every if include_unphysical or cp["physical"]]
    left_out = len(every) - len(cps)
    plain = ", ".join("%s=%g" % (k, v["value"]) for k, v in doc["parameters"].items())
    out = [f"% Generated by bhchem {__version__} for {fam} ({plain}).",
           "% Requires \\usepackage{booktabs}."]
    if left_out:
        out.append(f"% {left_out} unphysical critical point(s) left out (T_c <= 0, P_c <= 0 "
                   f"or outside the declared domain; all are in results.json); "
                   f"'bhchem report --include-unphysical' lists them.")
    out.append("")

    def table(label, caption, header, rows, align):
        out.extend([r"\begin{table}[ht]", r"\centering",
                    f"\\caption{{{caption}}}", f"\\label{{tab:{fam}-{label}}}",
                    f"\\begin{{tabular}}{{{align}}}", r"\toprule",
                    " & ".join(header) + r" \\", r"\midrule"])
        out.extend(" & ".join(r) + r" \\" for r in rows)
        out.extend([r"\bottomrule", r"\end{tabular}", r"\end{table}", ""])

    rows = []
    for i, cp in cps:
        rows.append([str(i), _tex_escape(cp["kind"]),
                     "yes" if cp["physical"] else "no",
                     {True: "yes", False: "no", None: "--"}[cp.get("on_preferred_branch")],
                     tex_number(cp["T"], digits), tex_number(cp["P"], digits),
                     tex_number(cp["v"], digits), tex_number(cp["ratio"], digits)])
    if rows:
        table("critical", f"Critical points of \\texttt{{{_tex_escape(fam)}}} ({params}); "
              f"complete: {doc['critical']['completeness']}.",
              ["", "kind", "physical", "preferred", "$T_c$", "$P_c$", "$v_c$",
               "$P_c v_c/T_c$"], rows, "rlllrrrr")
        keys = list(cps[0][1]["scale_free"])
        if keys:
            hdr = [""] + [f"${_latex_key(k)}$" for k in keys]
            srows = [[str(i)] + [tex_number(cp["scale_free"].get(k), digits) for k in keys]
                     for i, cp in cps]
            table("scale-free", f"Scale-free critical data of \\texttt{{{_tex_escape(fam)}}}.",
                  hdr, srows, "r" * (len(keys) + 1))
        erows = []
        for i, cp in cps:
            if not cp.get("exponents"):
                continue
            ex, fit = cp["exponents"], cp["fitted"]
            row = [str(i)]
            for k in ("alpha", "beta", "gamma", "delta"):
                f = fit[k]
                row.append(f"${_frac(ex[k])}$ ({tex_fitted(f['value'], f['uncertainty'])})")
            erows.append(row)
        if erows:
            table("exponents", "Critical exponents (" + _EXPONENT_TEX + "): exact (from the "
                  "series of the equation of state) and, in parentheses, fitted.",
                  ["", r"exponent $\alpha$", r"exponent $\beta$", r"exponent $\gamma$",
                   r"exponent $\delta$"], erows, "rllll")
    tps = doc["phases"]["triple_points"]
    if tps:
        trows = [[str(i), tex_number(tp["T"], digits), tex_number(tp["P"], digits),
                  _tex_escape(", ".join(tp["phases"]))] for i, tp in enumerate(tps, 1)]
        table("triple", "Triple points.", ["", "$T$", "$P$", "phases"], trows, "rrrl")
    if not rows and not tps:
        out.append("% No physical critical point and no triple point at these parameters."
                   if left_out else
                   "% No critical point and no triple point at these parameters.")
    return "\n".join(out) + "\n"


def _frac(s):
    if s is None:
        return "-"
    if "/" in s:
        a, b = s.split("/")
        return f"{a}/{b}"
    return s


def _latex_key(k: str) -> str:
    """A scale-free key for math mode: 'P_c*Q^2' -> 'P_c\\,Q^{2}', 'T_c*alpha^(1/2)' ->
    'T_c\\,\\mathrm{alpha}^{1/2}' (a multi-letter parameter upright, see _tex_symbol)."""
    import re
    k = re.sub(r"(?<![A-Za-z_])([A-Za-z]{2,}[0-9]*)(?![A-Za-z_0-9])",
               lambda m: f"\\mathrm{{{m.group(1)}}}", k)
    k = k.replace("*", r"\,")
    return re.sub(r"\^\(?([^)\s/]+(?:/[^)\s]+)?)\)?", r"^{\1}", k)


# -- markdown ----------------------------------------------------------------------------------
def report_md(doc: dict, figures: list, digits: int = 6) -> str:
    f = doc["family"]
    g = lambda x: "–" if x is None else f"{x:.{digits}g}"  # noqa: E731
    lines = [f"# {f['name']}: thermodynamics report", "",
             f"{f['summary']}.  Source of the formulas: {f['reference']}.", "",
             f"Generated by bhchem {doc['provenance']['version']} on {doc['provenance']['date']}.", "",
             "## Parameters and conventions", "", "| parameter | value | dimension | domain |",
             "| --- | --- | --- | --- |"]
    for k, v in doc["parameters"].items():
        lines.append(f"| {k} | {v['value']:g} | {v['dimension']} | {v['domain']} |")
    lines += [""] + [f"- {k}: {v}" for k, v in sorted(doc["convention"].items())]
    q = doc["quantities"]
    lines += ["", "## Derived thermodynamics", ""]
    for name in ("T", "V", "G"):
        if name in q:
            lines.append(f"- ${name} = {q[name]['latex']}$")
    eos = doc["equation_of_state"]
    if eos.get("latex"):
        lines.append(f"- equation of state ({eos['form']}): $P = {eos['latex']}$")
    lines += ["", f"**First law**: {doc['first_law']['message']}", "",
              f"**Smarr relation**: {doc['smarr']['message']}", "",
              "## Critical points", "", doc["critical"]["message"], ""]
    cps = doc["critical"]["critical_points"]
    if cps:
        lines += ["| # | kind | physical | on preferred branch | T_c | P_c | v_c | P_c v_c/T_c | critical exponents α, β, γ, δ |",
                  "| --- | --- | --- | --- | --- | --- | --- | --- | --- |"]
        for i, cp in enumerate(cps, 1):
            ex = cp.get("exponents")
            exs = ", ".join(ex[k] or "–" for k in ("alpha", "beta", "gamma", "delta")) if ex else "–"
            pref = {True: "yes", False: "no", None: "–"}[cp.get("on_preferred_branch")]
            lines.append(f"| {i} | {cp['kind']} | {'yes' if cp['physical'] else 'no'} | {pref} | "
                         f"{g(cp['T'])} | {g(cp['P'])} | {g(cp['v'])} | {g(cp['ratio'])} | {exs} |")
        lines.append("")
        if any(cp.get("exponents") for cp in cps):
            lines += ["Critical exponents (not parameters): " + "; ".join(
                f"exponent {k} ({EXPONENT_DEFINITIONS[k]})" for k in EXPONENT_DEFINITIONS)
                + "; t = T/T_c - 1.", ""]
        for i, cp in enumerate(cps, 1):
            if cp["scale_free"]:
                lines.append(f"Point {i}, scale-free: " + ", ".join(
                    f"{k} = {g(v)}" for k, v in cp["scale_free"].items()))
                lines.append("")
    ph = doc["phases"]
    lines += ["## Phase structure", "", f"Structure signature: **{ph['structure']}** "
              f"({ph['graph']['distinct_phases']} distinct phase(s)); {ph['message']}.", ""]
    for line in ph["lines"]:
        lo, hi = line["ends"]["low"], line["ends"]["high"]
        chk = ", ".join(f"{k} {v:.1e}" for k, v in line["checks"].items()
                        if isinstance(v, float))
        lines.append(f"- {line['kind']} line between {line['between'][0]} and "
                     f"{line['between'][1]}: from {lo['type']} (P = {g(lo['P'])}) to "
                     f"{hi['type']} (P = {g(hi['P'])}); checks: {chk or '–'}")
    for tp in ph["triple_points"]:
        lines.append(f"- triple point at T = {g(tp['T'])}, P = {g(tp['P'])} "
                     f"({', '.join(tp['phases'])})")
    for w in ph["warnings"]:
        lines.append(f"- WARNING: {w}")
    lines += ["", "## Figures", ""]
    for name, caption in figures:
        lines += [f"![{caption}]({name}.png)", "", f"*{caption}* (also `{name}.pdf`)", ""]
    lines += ["Tables for the paper: `tables.tex`; every number with provenance: `results.json`.", ""]
    return "\n".join(lines)


# -- the bundle ----------------------------------------------------------------------------------
def write_report(th: Thermodynamics, out_dir, digits: int = 6, force: bool = False,
                 progress=None, include_unphysical: bool = False) -> str:
    """Compute and write the report bundle atomically into ``out_dir``.

    Parameters
    ----------
    th : Thermodynamics
    out_dir : str or os.PathLike
        The folder to create (replaced only with ``force``).
    digits : int
        Significant digits in the tables (1 to 17).
    force : bool
        Replace an existing folder.
    progress : callable, optional
        Called with the name of each stage.
    include_unphysical : bool
        List unphysical critical points in ``tables.tex`` too (default: physical only;
        the file says how many it left out).  ``results.json`` and ``report.md`` always
        list every solution with its ``physical`` flag.

    Returns
    -------
    str
        The absolute path of the folder.  Every file is written through
        :func:`bhchem.present.serialize.atomic_write` inside a folder built by
        :func:`bhchem.present.serialize.atomic_directory`, so files end 0666 & ~umask and the
        folder 0777 & ~umask.
    """
    from bhchem.present.plots import EmptyFigureError, make_plot, save
    out_dir = os.path.abspath(os.fspath(out_dir))
    if os.path.lexists(out_dir):
        if not force:
            raise BhchemError(f"output folder {out_dir} exists; choose another or pass --force")
        if not os.path.isdir(out_dir) or os.path.islink(out_dir):
            raise BhchemError(f"output folder {out_dir} exists and is not a folder; "
                              f"choose another name")
    parent = os.path.dirname(out_dir)
    if not os.path.isdir(parent):
        raise BhchemError(f"output folder {out_dir}: parent {parent} does not exist")
    if not 1 <= digits <= 17:
        raise BhchemError("--digits must be between 1 and 17")
    with atomic_directory(out_dir, replace=force) as tmp:
        doc, pd = compute_results(th, progress)
        figures = []
        for name, caption in FIGURES:
            if progress:
                progress(f"figure {name}")
            try:
                kw = {"diagram": pd} if name == "pt" else {}
                res = make_plot(name, th, **kw)
            except EmptyFigureError as exc:
                doc.setdefault("figures_skipped", {})[name] = str(exc)
                continue
            save(res, os.path.join(tmp, f"{name}.png"))
            save(res, os.path.join(tmp, f"{name}.pdf"))
            del res  # saved, not returned: the figure (never in pyplot) is released
            figures.append((name, caption))
        doc["figures"] = [n for n, _ in figures]
        atomic_write(os.path.join(tmp, "results.json"), dumps(doc, family=th.family))
        atomic_write(os.path.join(tmp, "tables.tex"),
                     tables_tex(doc, digits, include_unphysical=include_unphysical))
        atomic_write(os.path.join(tmp, "report.md"), report_md(doc, figures, digits))
    return out_dir
