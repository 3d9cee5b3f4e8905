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
import os

from bhchem.version import __version__
from bhchem.core.compiled import Thermodynamics
from bhchem.conventions import convention_record
from bhchem.errors import BhchemError
from bhchem.fileio import (atomic_directory, atomic_write, check_writable_folder, clean_stale,
                           fault_point, output_lock)
from bhchem.present.serialize import jsonable, to_json
from bhchem.present.critical_report import critical_json
from bhchem.present.report_text import report_md, tables_tex
from bhchem.analysis.phases import phase_diagram
from bhchem.present.phase_text import diagram_json
from bhchem.present.summary import show_json
from bhchem.present.plots import EmptyFigureError, save
from bhchem.workflows.figures import make_figure
from bhchem.workflows.topology import default_pressure, landscape_run
from bhchem.analysis.topology import thermodynamic_topology
from bhchem.present.topology_text import landscape_json, topology_json
from bhchem.present.topology_plots import plot_first_passage, plot_landscape, plot_tau

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
        "admissibility": show["admissibility"],
        "conditions": show["conditions"],
        "critical": {k: crit[k] for k in ("completeness", "method", "message", "converged",
                                          "critical_points", "topological_charge")},
        "isoperimetric": show["isoperimetric"],
        "phases": phases,
    }
    return doc, pd


# -- LaTeX tables ------------------------------------------------------------------------
def topology_results(th: Thermodynamics, progress=None) -> tuple[dict, list]:
    """Issue 16 for the report: topology at the default pressure, the landscape and first
    passage at its transition (if any).  Returns the JSON parts and a list of
    (name, caption, figure maker)."""
    if progress:
        progress("thermodynamic topology")
    P = default_pressure(th)
    topo = thermodynamic_topology(th, P)
    doc = {"topology": topology_json(topo), "landscape": None}
    figures = [("tau", "tau(r+) = 1/T with the zeros of phi marked by their winding numbers",
                lambda: plot_tau(topo))]
    try:
        run = landscape_run(th, P)
    except BhchemError as exc:
        doc["landscape_note"] = str(exc)
        return doc, figures
    doc["landscape"] = landscape_json(run.landscape, run.passage, run.note)
    figures.append(("landscape", "free-energy landscape G_L = M - T_E S",
                    lambda: plot_landscape(run.landscape)))
    if run.passage is not None and len(run.passage.t):
        figures.append(("first-passage", "first-passage-time distribution (t in units of "
                        "the friction zeta)", lambda: plot_first_passage(run.passage)))
    return doc, figures


def write_report(th: Thermodynamics, out_dir, digits: int = 6, force: bool = False,
                 progress=None, include_unphysical: bool = False, notify=None,
                 topology: bool = False) -> str:
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
    notify : callable, optional
        Called with one line for each temporary of an interrupted earlier run that was
        removed (or a bundle restored from its renamed-aside copy).
    topology : bool
        Add the thermodynamic topology, the free-energy landscape and the first passage
        (issue 16): keys ``topology``, ``landscape`` in results.json, a section in
        report.md, figures ``tau``, ``landscape``, ``first-passage``.

    Returns
    -------
    str
        The absolute path of the folder.  Every file is written through
        :func:`bhchem.present.serialize.atomic_write` inside a folder built by
        :func:`bhchem.present.serialize.atomic_directory`, so files end 0666 & ~umask and the
        folder 0777 & ~umask.

    Raises
    ------
    BhchemError
        Before anything is computed: the folder exists (without ``force``), is a file, its
        parent is missing, a file or not writable, or another process is writing it
        (:class:`bhchem.fileio.OutputBusyError`).

    Notes
    -----
    Faults: the folder is written under a temporary name and renamed into place; with
    ``force`` the old folder is first renamed aside and removed only after the new one is
    in place, so a kill at any instant leaves one complete bundle (the next run restores the
    aside copy if the kill fell between the two renames, and removes stale temporaries).
    """
    out_dir = os.path.abspath(os.fspath(out_dir))
    _check_target(out_dir, force)
    if not 1 <= digits <= 17:
        raise BhchemError("--digits must be between 1 and 17")
    with output_lock(out_dir):
        for note in clean_stale(out_dir):
            if notify:
                notify(f"{note} (left by an interrupted run)")
        _check_target(out_dir, force)
        with atomic_directory(out_dir, replace=force) as tmp:
            doc, pd = compute_results(th, progress)
            fault_point("report-computed")
            figures = []
            for name, caption in FIGURES:
                if progress:
                    progress(f"figure {name}")
                try:
                    kw = {"diagram": pd} if name == "pt" else {}
                    res = make_figure(th, name, **kw)
                except EmptyFigureError as exc:
                    doc.setdefault("figures_skipped", {})[name] = str(exc)
                    continue
                save(res, os.path.join(tmp, f"{name}.png"), table=True)
                save(res, os.path.join(tmp, f"{name}.pdf"))
                del res  # saved, not returned: the figure (never in pyplot) is released
                figures.append((name, caption))
            if topology:
                part, extra = topology_results(th, progress)
                doc.update(part)
                for name, caption, make in extra:
                    try:
                        res = make()
                    except EmptyFigureError as exc:
                        doc.setdefault("figures_skipped", {})[name] = str(exc)
                        continue
                    save(res, os.path.join(tmp, f"{name}.png"), table=True)
                    save(res, os.path.join(tmp, f"{name}.pdf"))
                    del res
                    figures.append((name, caption))
            doc["figures"] = [n for n, _ in figures]
            atomic_write(os.path.join(tmp, "results.json"), dumps(doc, family=th.family))
            atomic_write(os.path.join(tmp, "tables.tex"),
                         tables_tex(doc, digits, include_unphysical=include_unphysical))
            atomic_write(os.path.join(tmp, "report.md"), report_md(doc, figures, digits))
            fault_point("report-written")
            _check_target(out_dir, force)
    return out_dir


def _check_target(out_dir: str, force: bool) -> None:
    """Refuse an output folder that cannot be (re)placed, before anything is computed."""
    if os.path.lexists(out_dir):
        if not os.path.isdir(out_dir) or os.path.islink(out_dir):
            raise BhchemError(f"output folder {out_dir} exists and is not a folder; "
                              f"choose another name")
        if not force:
            raise BhchemError(f"output folder {out_dir} exists; choose another or pass --force")
    check_writable_folder(os.path.dirname(out_dir), f"output folder {out_dir}")
