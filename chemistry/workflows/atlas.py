"""Parameter atlas: how the phase structure changes across couplings.

For every point of a grid over one to three parameters the atlas records the physical
critical points (scale-free values), the structure signature of the phase diagram
(:func:`bhchem.analysis.phases.structure_signature`) and its key numbers (triple point,
ends of a reentrant window), or the error that stopped that point (never dropped).

Scale invariance: the results depend only on the scale-free combinations of the
parameters (q / ell^(n_q), with ell set by a reference parameter).  Grid points with
equal combinations are computed once; the atlas says how many distinct combinations
it scanned.

Execution: the grid is cut into chunks; a chunk runs in one worker (numpy inside);
chunks run in local processes (``workers``), or on any executor with ``submit``
(a ``concurrent.futures`` executor or a Dask ``distributed.Client``).  Every finished
chunk is written atomically to ``DIR/chunks/``; rerunning the same scan into the same
folder computes only the missing chunks, and the final table is assembled from the
chunks in grid order, so an interrupted and resumed scan gives the identical table.  A chunk
is reused only if its SHA-256 matches the manifest (damaged or edited chunks are recomputed,
and named); a resume with another bhchem version or an edited family file is refused.

Boundaries: along every grid edge whose two ends differ in any classified column (the
structure signature, the number of physical critical points ``n_critical`` and the kind of
each critical point; :func:`classification`), every change is located by bisection
(``refine`` steps, so within edge width / 2^refine) and stored with the atlas; with
``refine=0`` the grid edge itself is the bracket.  An edge that cannot be resolved (a failed
point) is listed with ``converged: false`` and a one-line note, never dropped.  The
``structures`` list names every structure that occurs in the rows or the boundaries.

Methods: ``diagrams`` classifies every distinct scale-free grid point by its own full phase
diagram (above).  ``events`` (1D grids) locates the structure events along the axis first
(:func:`bhchem.analysis.structure_events.structure_events`: continuation + Newton, each event
to ~1e-14), cuts the axis at them, and computes full phase diagrams only for one
representative grid point per interval plus a seeded random check sample of
``min(CHECK_SAMPLE, n)`` further grid points; every other point takes the structure,
``n_critical`` and critical-point kinds of its interval (its row says ``from_interval``; the
per-point numbers, critical values and triple point, are left empty there).  A check point
whose classification differs from its interval's is listed in ``checks`` (and on stderr through
``notify``), never hidden; the events (with the structures below and above) are in
``events`` and drawn on the figure.  2D grids: the events along the first axis are located at
every value of the second; an event whose extended system is continuable is traced from its
row by pseudo-arclength continuation in the second coupling
(:func:`bhchem.analysis.structure_events.trace_event_curve`: turning points followed, every
point solved by Newton with its residual, the ends exactly on the grid's edges), the others
are chained row by row, into :class:`~bhchem.analysis.events.EventCurve` objects
(``event_curves``, drawn as curves); the cells are the connected components (networkx) of the
grid graph whose edges are cut where an event lies between their two ends (the events below
x differ), one representative diagram per cell plus the check sample.  ``auto`` (the
default) takes ``events`` for a linear 1D or 2D grid of continuous couplings with at least
EVENTS_MIN_POINTS points and the default state conditions (below that per-point diagrams
cost about as much as the representatives and checks) and ``diagrams`` otherwise.

Files: the table (atlas.csv, atlas.json) is the result.  The figure (atlas.png) is drawn
first; if it cannot be written (matplotlib missing, disk full) the table says so in
``figure_error`` and no figure of an earlier run is left behind.
"""
from __future__ import annotations

import csv
import ctypes
import hashlib
import io
import itertools
import json
import math
import os
import signal
import sys
import warnings
from dataclasses import dataclass, replace

import numpy as np

from concurrent.futures import ProcessPoolExecutor
from concurrent.futures import as_completed as futures_as_completed

from bhchem.analysis.critical import find_critical_points, scale_free_key
from bhchem.analysis.phases import phase_diagram
from bhchem.analysis.events import EventCurve
from bhchem.analysis.structure_events import structure_events, trace_event_curve
from bhchem.core.checks import first_law_proved
from bhchem.core.compiled import bind, parse_number, resolve_ensemble, validate_values
from bhchem.declare.registry import get_family, load_family_file
from bhchem.errors import BhchemError, BhchemWarning
from bhchem.fileio import atomic_write, fault_point
from bhchem.version import __version__
from bhchem.workflows.report import dumps
from bhchem.present.plots import PlotResult, save
from bhchem.present.progress import progress_display
from bhchem.present.style import PALETTE, styled

CHUNK_SIZE = 8
#: most points in one scan (all axes together): the scan keeps a row per point in memory
#: (about 1 kB each) and a full phase diagram per distinct scale-free point; split a larger
#: atlas into several scans (each resumable) or coarsen the grid
MAX_GRID_POINTS = 100_000
#: finished chunks between two rewrites of the manifest's checksums (at most this many
#: chunks are recomputed after a kill)
MANIFEST_EVERY = 16
ATLAS_ANCHORS = 48  # isobar anchors per phase diagram (narrow reentrant windows need them)
#: grid points checked by a full diagram in the events method (seeded, see scan)
CHECK_SAMPLE = 8
#: the seed of the check sample (fixed: a rerun checks the same points)
CHECK_SEED = 17
#: ``method="auto"`` uses events for a linear 1D or 2D grid of at least this many points
EVENTS_MIN_POINTS = 16
METHODS = ("auto", "diagrams", "events")
#: full critical-point searches per row of a 2D events map (continuation covers the rest; a
#: pair of critical points born and gone between two samples of a row would be missed)
EVENT_SAMPLES_2D = 7


@dataclass(frozen=True)
class GridAxis:
    name: str
    values: tuple
    spacing: str

    @property
    def spec(self) -> str:
        lo, hi, n = self.values[0], self.values[-1], len(self.values)
        return f"{self.name}={'log:' if self.spacing == 'log' else ''}{lo!r}:{hi!r}:{n}"


def parse_grid(spec: str) -> GridAxis:
    """'NAME=START:STOP:N' (linear) or 'NAME=log:START:STOP:N'."""
    name, sep, rest = str(spec).partition("=")
    name = name.strip()
    if not sep or not name:
        raise BhchemError(f"grid {spec!r} must look like NAME=START:STOP:N or NAME=log:START:STOP:N")
    spacing = "linear"
    if rest.startswith("log:"):
        spacing, rest = "log", rest[4:]
    parts = rest.split(":")
    if len(parts) != 3:
        raise BhchemError(f"grid {spec!r} must look like NAME=START:STOP:N")
    try:
        lo, hi, n = float(parts[0]), float(parts[1]), int(parts[2])
        lo, hi = parse_number(parts[0], f"{name} START"), parse_number(parts[1], f"{name} STOP")
    except BhchemError as exc:
        raise BhchemError(f"grid {spec!r}: {exc}") from None
    except ValueError:
        raise BhchemError(f"grid {spec!r}: START and STOP must be numbers and N an integer") from None
    if not (math.isfinite(lo) and math.isfinite(hi)) or n < 1 or n > MAX_GRID_POINTS:
        raise BhchemError(f"grid {spec!r}: finite START/STOP and 1 <= N <= {MAX_GRID_POINTS} "
                          f"required")
    if spacing == "log":
        if lo <= 0 or hi <= 0:
            raise BhchemError(f"grid {spec!r}: log spacing needs positive START and STOP")
        vals = np.geomspace(lo, hi, n)
    else:
        vals = np.linspace(lo, hi, n)
    return GridAxis(name, tuple(float(v) for v in vals), spacing)


# -- one grid point ----------------------------------------------------------------------------
def _family(family_name, family_file):
    if family_file:
        load_family_file(family_file)
    return get_family(family_name)


def analyse_point(family_name, family_file, params: dict, admissible=(None, ())) -> dict:
    """Critical points, structure and key numbers at one parameter point (never raises).
    ``admissible`` is ``(condition set, conditions dropped)`` (see :func:`bhchem.bind`)."""
    row = {"error": ""}
    try:
        th = bind(_family(family_name, family_file), conditions=admissible[0],
                  without=admissible[1], **params)
        search = find_critical_points(th)
        cps = search.physical
        row["n_critical"] = len(cps)
        for i, cp in enumerate(cps[:3], 1):
            for k, v in cp.scale_free.items():
                row[f"cp{i}:{k}"] = v
            row[f"cp{i}:kind"] = cp.kind
            row[f"cp{i}:ratio"] = cp.ratio
        pd = phase_diagram(th, n_anchor=ATLAS_ANCHORS, n_dense=4)
        row["structure"] = pd.structure
        if pd.triple_points:
            tp = pd.triple_points[0]
            row["triple_T"], row["triple_P"] = tp.T, tp.P
        zero = [ln for ln in pd.lines if ln.kind == "zeroth-order"]
        if zero:
            row["reentrant_P_low"] = min(ln.ends["low"]["P"] for ln in zero)
            row["reentrant_P_high"] = max(ln.ends["high"]["P"] for ln in zero)
    except Exception as exc:  # recorded, never dropped
        row["error"] = f"{type(exc).__name__}: {exc}"
        row.setdefault("n_critical", None)
        row.setdefault("structure", "error")
    return row


def run_chunk(family_name, family_file, fixed, points, admissible=(None, ())) -> list:
    """Worker: analyse a chunk of (index, params) points."""
    out = []
    for index, params in points:
        row = analyse_point(family_name, family_file, {**fixed, **params}, admissible)
        row.update({"index": index, **params})
        out.append(row)
    return out


# -- the scan ------------------------------------------------------------------------------------
def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def family_source_sha256(fam):
    """SHA-256 of the file that declares ``fam`` (None if it has no readable source file)."""
    src = getattr(fam, "source", None) or ""
    if not src or not os.path.isfile(src):
        return None
    with open(src, "rb") as fh:
        return _sha256(fh.read())


#: manifest keys that identify a scan (``chunks`` holds the checksums and may grow)
_IDENTITY = ("family", "family_file", "grid", "fixed", "chunk_size", "anchors", "conditions",
             "method", "checks")


def _resume_manifest(man_path, manifest, out_dir, say) -> dict:
    """The chunk checksums to trust from an existing manifest (empty for a new scan).

    Raises BhchemError for another scan, another bhchem version or an edited family file.
    """
    if not os.path.lexists(man_path):
        return {}
    try:
        with open(man_path, "rb") as fh:
            old = json.loads(fh.read().decode("utf-8"))
        if not isinstance(old, dict) or not isinstance(old.get("chunks", {}), dict):
            raise ValueError("not a manifest object")
    except (OSError, ValueError) as exc:
        say(f"{man_path} is damaged ({type(exc).__name__}); recomputing every chunk")
        return {}
    new = json.loads(_dumps(manifest))
    if any(old.get(k) != new.get(k) for k in _IDENTITY):
        raise BhchemError(f"{out_dir} holds a different scan; use another folder")
    if old.get("version") != new["version"]:
        raise BhchemError(f"{out_dir} was started by bhchem {old.get('version')}, this is "
                          f"bhchem {new['version']}; refusing to mix versions (use another "
                          f"folder)")
    if old.get("family_source_sha256") != new["family_source_sha256"]:
        raise BhchemError(f"the family source changed since {out_dir} was started: SHA-256 "
                          f"{old.get('family_source_sha256')} then, "
                          f"{new['family_source_sha256']} now; refusing to mix formulas "
                          f"(use another folder)")
    return {k: v for k, v in old.get("chunks", {}).items() if isinstance(v, str)}


def _read_chunk(path, checksums, expected):
    """(rows, None) for an intact chunk, or (None, why) for a damaged or edited one."""
    try:
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        return None, f"cannot be read ({exc.strerror})"
    want = checksums.get(os.path.basename(path))
    if want is None:
        return None, "has no checksum in the manifest"
    if _sha256(data) != want:
        return None, "was changed since it was written (checksum mismatch)"
    try:
        rows = json.loads(data.decode("utf-8"))
    except ValueError:
        return None, "is damaged (not JSON)"
    ok = isinstance(rows, list) and len(rows) == len(expected) and all(
        isinstance(r, dict) and r.get("index") == i for r, (i, _) in zip(rows, expected))
    if not ok:
        return None, "is damaged (not the rows of this chunk)"
    return rows, None


def _atomic_write(path, text):
    atomic_write(path, text)


def _dumps(obj) -> str:
    return dumps(obj)


#: Linux prctl option: the signal a process gets when its parent dies
_PR_SET_PDEATHSIG = 1


def worker_setup(parent_pid: int) -> None:
    """Initializer of the scan's worker processes.

    * Ctrl-C (SIGINT, sent to the whole process group) is left to the parent, which stops
      the scan and says "interrupted" once; a worker ignores it (no worker tracebacks).
    * A worker must not outlive its parent: on Linux the kernel sends it SIGTERM when the
      parent dies, whatever kills the parent (``prctl(PR_SET_PDEATHSIG)``); if the parent
      is already gone when the worker starts, the worker exits at once.  Elsewhere the pool's
      own shutdown is the only mechanism (stated in the README's fault table).
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # a grid point's warnings would print once per worker with source excerpts; the table
    # records each point's structure and numbers, the main process its own warnings
    warnings.simplefilter("ignore", BhchemWarning)
    if sys.platform.startswith("linux"):
        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGTERM), 0, 0, 0)
        except (OSError, AttributeError):  # no prctl: fall back to the pool's shutdown
            pass
    if os.getppid() != parent_pid:       # the parent died before the line above ran
        os._exit(1)


def _as_completed(executor, futures):
    if hasattr(executor, "gather"):  # a Dask distributed Client
        from distributed import as_completed  # lazy: optional extra, only for a Dask client
        return as_completed(futures)
    return futures_as_completed(futures)


def scan(family_name, axes, fixed=None, out_dir=None, *, family_file=None, workers=1,
         executor=None, chunk_size=CHUNK_SIZE, refine=8, quiet=True,
         stop_after_chunks=None, notify=None, conditions=None, without=(),
         method="auto", checks=CHECK_SAMPLE) -> dict:
    """Run (or resume) an atlas scan; write atlas.csv, atlas.json, atlas.png into out_dir.

    Returns the atlas document (as written to atlas.json).  ``stop_after_chunks`` stops
    after that many new chunks (to test resuming).

    Resuming trusts nothing it cannot verify: the manifest records the bhchem version, the
    SHA-256 of the family's source file and the SHA-256 of every finished chunk.  A resume
    with another version or an edited family file is refused (naming both); a chunk that is
    damaged (unreadable, not the rows it should hold) or edited (checksum mismatch) is
    recomputed, and a damaged manifest makes every chunk be recomputed; each recovery is
    reported through ``notify`` (one line naming the file).

    ``conditions`` and ``without`` choose which states count at every point (as in
    :func:`bhchem.bind`); the selection is part of the scan's identity and of atlas.json.

    ``method`` is ``"diagrams"`` (a full phase diagram per distinct point), ``"events"``
    (1D: structure events, then diagrams for one representative per interval and a check
    sample of ``min(checks, n)`` points; see the module docstring) or ``"auto"``.
    """
    fixed = dict(fixed or {})
    fam = _family(family_name, family_file)
    # a potential on the grid or fixed (Phi_Q) chooses the ensemble of every point
    fam, _ = resolve_ensemble(fam, {**fixed, **{a.name: a.values[0] for a in axes}})
    without = tuple(without or ())
    adm = bind(fam, conditions=conditions, without=without, **fixed).admissibility
    admissible = (conditions, without)
    names = [a.name for a in axes]
    if len(set(names)) != len(names):
        raise BhchemError("each grid parameter may appear once")
    if not 1 <= len(axes) <= 3:
        raise BhchemError("give one to three --grid parameters")
    for a in axes:
        for v in (a.values[0], a.values[-1]):
            validate_values(fam, {**fixed, a.name: v})
    for nm in fixed:
        if nm in names:
            raise BhchemError(f"parameter {nm} is both fixed (-p) and on the grid")
    total = math.prod(len(a.values) for a in axes)
    if total > MAX_GRID_POINTS:
        raise BhchemError(f"the grid has {total:,} points; one scan takes at most "
                          f"{MAX_GRID_POINTS:,} (a row per point stays in memory): coarsen it or "
                          f"split it into several scans")
    if method not in METHODS:
        raise BhchemError(f"method {method!r}: choose one of {', '.join(METHODS)}")
    continuous = {p.name for p in bind(fam, **{**fixed, **{a.name: a.values[0] for a in axes}}
                                       ).derivation.parameters}
    auto = method == "auto"
    if method == "auto":
        method = "events" if (len(axes) in (1, 2)
                              and all(a.spacing == "linear" and a.name in continuous
                                      for a in axes)
                              and math.prod(len(a.values) for a in axes) >= EVENTS_MIN_POINTS
                              and conditions is None and not without) else "diagrams"
    if method == "events" and len(axes) > 2:
        raise BhchemError("--method events takes one or two --grid axes (use diagrams for "
                          "3D grids)")
    if method == "events" and any(a.name not in continuous for a in axes):
        raise BhchemError(f"--method events needs continuous couplings; "
                          f"{', '.join(a.name for a in axes if a.name not in continuous)} "
                          f"is discrete (use --method diagrams)")
    if method == "events" and (conditions is not None or without):
        raise BhchemError("--method events uses the family's default state conditions; use "
                          "--method diagrams with --conditions/--without")
    points = [dict(zip(names, combo)) for combo in itertools.product(*(a.values for a in axes))]
    # scale invariance: one computation per distinct set of scale-free combinations
    keys = [scale_free_key(bind(fam, **{**fixed, **p})) for p in points]
    if executor is None and workers > 1:
        # the pool's workers are forked from this process (Linux) and inherit its caches: the
        # symbolic first-law proof that every analysis asks for (seconds of sympy for some
        # families) is done here once, not once in every worker
        first_law_proved(bind(fam, **{**fixed, **points[0]}).derivation)
    rep_of, reps = {}, []
    for i, k in enumerate(keys):
        if k not in rep_of:
            rep_of[k] = i
            reps.append(i)
    plan = None
    if method == "events":
        try:
            plan = (_event_plan(fam, axes[0], fixed, max(int(checks), 0)) if len(axes) == 1
                    else _event_plan_2d(fam, axes, fixed, max(int(checks), 0), executor,
                                        workers))
        except Exception as exc:  # events unavailable here: said, never silently swapped
            if not auto:
                raise BhchemError(f"--method events: the structure events could not be "
                                  f"located ({type(exc).__name__}: {exc}); use --method "
                                  f"diagrams") from None
            (notify or (lambda line: None))(
                f"structure events could not be located ({type(exc).__name__}: {exc}); "
                f"computing a full diagram per point instead")
            method = "diagrams"
    if plan is not None:
        need = {rep_of[keys[i]] for i in plan["computed"]}
        reps = [i for i in reps if i in need]
    manifest = {"family": family_name, "family_file": os.path.abspath(family_file) if family_file else None,
                "grid": [a.spec for a in axes], "fixed": fixed, "chunk_size": chunk_size,
                "anchors": ATLAS_ANCHORS, "version": __version__,
                "conditions": adm.to_dict(), "method": method,
                "checks": checks if method == "events" else None,
                "family_source_sha256": family_source_sha256(fam)}
    out_dir = os.path.abspath(out_dir)
    chunk_dir = os.path.join(out_dir, "chunks")
    os.makedirs(chunk_dir, exist_ok=True)
    man_path = os.path.join(out_dir, "manifest.json")
    rep_points = [(i, points[i]) for i in reps]
    chunks = [rep_points[i:i + chunk_size] for i in range(0, len(rep_points), chunk_size)]
    say = notify or (lambda line: None)
    checksums = _resume_manifest(man_path, manifest, out_dir, say)
    manifest = json.loads(_dumps(manifest))
    manifest["chunks"] = checksums

    def chunk_path(i):
        return os.path.join(chunk_dir, f"chunk-{i:06d}.json")

    pending = []

    def save_checksums():
        if pending:
            _atomic_write(man_path, _dumps(manifest))
            pending.clear()

    def record(i, rows):
        # the manifest is rewritten every MANIFEST_EVERY chunks (a count), not after each:
        # a chunk whose checksum was not yet saved when the run died is recomputed
        text = _dumps(rows)
        _atomic_write(chunk_path(i), text)
        fault_point("atlas-chunk-written")
        manifest["chunks"][os.path.basename(chunk_path(i))] = _sha256(text.encode("utf-8"))
        pending.append(i)
        if len(pending) >= MANIFEST_EVERY:
            save_checksums()

    _atomic_write(man_path, _dumps(manifest))
    loaded = {}
    for i in range(len(chunks)):
        if os.path.lexists(chunk_path(i)):
            rows, why = _read_chunk(chunk_path(i), manifest["chunks"], chunks[i])
            if why:
                say(f"{chunk_path(i)} {why}; recomputing it")
            else:
                loaded[i] = rows
    missing = [i for i in range(len(chunks)) if i not in loaded]
    progress = progress_display("scan", len(rep_points), unit="points", quiet=quiet)
    progress.advance(sum(len(chunks[i]) for i in range(len(chunks)) if i not in set(missing)))
    # one pool for the whole run: chunks and boundary refinement; a caller's executor is
    # used as given and never shut down here
    own = None
    if executor is None and workers > 1:
        own = executor = ProcessPoolExecutor(max_workers=workers, initializer=worker_setup,
                                             initargs=(os.getpid(),))
    written = 0
    try:
        if executor is None:
            for i in missing:
                rows = run_chunk(family_name, family_file, fixed, chunks[i], admissible)
                record(i, rows)
                loaded[i] = json.loads(_dumps(rows))
                progress.advance(len(rows))
                written += 1
                if stop_after_chunks is not None and written >= stop_after_chunks:
                    save_checksums()
                    return {"interrupted": True, "chunks_written": written}
        else:
            futs = {}
            for i in missing:
                f = executor.submit(run_chunk, family_name, family_file, fixed, chunks[i],
                                    admissible)
                futs[f] = i
            for f in _as_completed(executor, list(futs)):
                i = futs[f]
                rows = f.result()
                record(i, rows)
                loaded[i] = json.loads(_dumps(rows))
                progress.advance(len(rows))
                written += 1
                if stop_after_chunks is not None and written >= stop_after_chunks:
                    for g in futs:
                        g.cancel()
                    save_checksums()
                    return {"interrupted": True, "chunks_written": written}
        save_checksums()
        progress.close()
        progress = None
        computed = {}
        for i in range(len(chunks)):
            for r in loaded[i]:
                computed[r["index"]] = r
        rows = []
        for i, p in enumerate(points):
            src = computed.get(rep_of[keys[i]])
            r = dict(src) if src is not None else {}
            r.update({"index": i, **p})
            rows.append(r)
        if plan is None:
            boundaries = _boundaries(family_name, family_file, fixed, axes, rows, refine,
                                     executor, admissible)
        else:
            boundaries = (_apply_plan(plan, axes[0], rows, say) if len(axes) == 1 else
                          _apply_plan_2d(plan, axes, rows, say))
    finally:
        if own is not None:
            own.shutdown(wait=True, cancel_futures=True)
        if progress is not None:
            progress.close()
    doc = _assemble(family_name, fam, axes, fixed, rows, boundaries)
    doc["conditions"] = adm.to_dict()
    doc["distinct_scale_free_points"] = len(set(rep_of.values()))
    doc["method"] = method
    if plan is not None:
        doc["events"] = plan["events"]
        doc["checks"] = plan["checks"]
        doc["unexplained"] = plan["unexplained"]
        if "curves" in plan:
            doc["event_curves"] = plan["curves"]
        doc["diagrams_computed"] = len(reps)
    _write_outputs(out_dir, doc, axes)
    return doc


# -- the events method (1D) ---------------------------------------------------------------------
def _event_plan(fam, axis, fixed, n_checks) -> dict:
    """Events along the axis, the interval of every grid point, the representatives and the
    seeded check sample (grid indices whose full diagrams are computed)."""
    lo, hi = axis.values[0], axis.values[-1]
    if lo > hi:
        lo, hi = hi, lo
    found = structure_events(fam, axis.name, (lo, hi), **fixed)
    cuts = [e.value for e in found.events]
    vals = np.array(axis.values)
    interval = np.searchsorted(np.array(cuts), vals, side="right") if cuts else \
        np.zeros(len(vals), int)
    on_event = [i for i, v in enumerate(vals)
                if any(abs(v - c) <= 1e-12 * max(1.0, abs(c)) for c in cuts)]
    reps = {}
    for k in sorted(set(interval.tolist())):
        members = [i for i in range(len(vals)) if interval[i] == k and i not in on_event]
        if not members:
            continue
        mid = 0.5 * (vals[members[0]] + vals[members[-1]])
        reps[k] = min(members, key=lambda i: abs(vals[i] - mid))
    rest = [i for i in range(len(vals)) if i not in reps.values()]
    rng = np.random.default_rng(CHECK_SEED)
    n_check = min(n_checks, len(rest))
    checks = sorted(int(i) for i in rng.choice(rest, size=n_check, replace=False)) \
        if n_check else []
    computed = sorted(set(reps.values()) | set(checks) | set(on_event))
    return {"found": found, "interval": interval.tolist(), "reps": reps, "checks": checks,
            "computed": computed, "on_event": on_event}


#: the columns a grid point takes from its interval's (or cell's) representative
_FROM_REPRESENTATIVE = ("structure", "n_critical", "cp1:kind", "cp2:kind", "cp3:kind")


def _fill_from_representatives(rows, representative_of) -> None:
    """A row without its own diagram takes the classified columns and the error of the row
    ``representative_of(i)`` (``from_interval`` says which rows did)."""
    for i, r in enumerate(rows):
        if "structure" in r:
            r["from_interval"] = False
            continue
        src = rows[representative_of(i)]
        for k in _FROM_REPRESENTATIVE:
            if k in src:
                r[k] = src[k]
        r["error"] = src.get("error", "")
        r["from_interval"] = True


def _apply_plan(plan, axis, rows, say) -> list:
    """Fill every row from its interval's representative, compare the check sample, fill the
    events' ``below``/``above``; returns the boundaries (one per event)."""
    reps, interval = plan["reps"], plan["interval"]
    _fill_from_representatives(rows, lambda i: reps[interval[i]])
    checks = []
    for i in plan["checks"]:
        k = interval[i]
        want, got = classification(rows[reps[k]]), classification(rows[i])
        agree = want == got and not rows[i]["error"]
        checks.append({"index": i, axis.name: axis.values[i], "interval": k, "agree": agree,
                       "expected": want, "found": got, "error": rows[i]["error"]})
        if not agree:
            say(f"atlas check disagrees at {axis.name}={axis.values[i]!r}: the interval's "
                f"structure is {want['structure']}, its own diagram gives {got['structure']}")
    events, boundaries = [], []
    ks = sorted(reps)
    for j, e in enumerate(plan["found"].events):
        below = next((rows[reps[k]] for k in reversed(ks) if k <= j), None)
        above = next((rows[reps[k]] for k in ks if k >= j + 1), None)
        sb = below["structure"] if below else None
        sa = above["structure"] if above else None
        kind = e.kind
        if kind == "critical-leaves-preferred" and sb and sa and \
                ("triple-point" in sb) != ("triple-point" in sa):
            kind = "triple-point"
        e = replace(e, kind=kind, below=sb, above=sa)
        events.append(e.to_dict())
        cb = classification(below) if below else {"structure": sb}
        ca = classification(above) if above else {"structure": sa}
        b = _boundary(axis.name, {}, e.value, e.value, cb, ca, 0, False, e.converged,
                      f"{e.kind} ({e.method})")
        b["event"] = e.kind
        boundaries.append(b)
    found = plan["found"]
    plan["events"] = events
    plan["checks"] = {"seed": CHECK_SEED, "sample": len(checks),
                      "disagreements": sum(not c["agree"] for c in checks), "points": checks}
    plan["unexplained"] = [dict(u) for u in found.unexplained]
    for u in found.unexplained:
        say(f"structure events: unexplained change in {axis.name} {u['bracket']}: {u['what']}")
    for e in events:
        if not e["converged"]:
            say(f"structure events: the {e['kind']} event at {axis.name}={e['value']!r} did "
                f"not converge (residuals {e['residuals']})")
    return boundaries


def _on_curve(points, x, y, xr, yr, tol=1e-7) -> bool:
    """Whether (x, y) lies on the curve sampled by the polyline ``points``: distance in
    units of the grid's ranges below ``tol``, or below half the square of the longest chord
    (a chord of length L of a curve with curvature kappa misses it by L^2 kappa / 8: a
    curved event line, alpha3 = 2 alpha2^2, lies up to ~1e-5 off its own polyline, and each
    row event on it used to start a new copy of the same curve)."""
    p = np.asarray(points, float) / (xr, yr)
    q = np.array([x / xr, y / yr])
    if len(p) == 1:
        return bool(np.hypot(*(p[0] - q)) <= tol)
    a, b = p[:-1], p[1:]
    d = b - a
    tol = max(tol, 0.5 * float(np.max(np.einsum("ij,ij->i", d, d))))
    t = np.clip(np.einsum("ij,ij->i", q - a, d) / np.maximum(np.einsum("ij,ij->i", d, d),
                                                             1e-300), 0, 1)
    return bool(np.min(np.hypot(*(a + t[:, None] * d - q).T)) <= tol)


def _trace_curves(fam, found, kind, ax, ay, max_curves: int = 20):
    """EventCurves of one kind by continuation of the row events in the second coupling
    (:func:`bhchem.analysis.structure_events.trace_event_curve`), each row event seeding a
    curve unless an earlier curve passes through it; None when some event of the kind is not
    continuable (then the rows are chained instead)."""
    seeds = [(j, e) for j, f in enumerate(found) for e in f.events if e.kind == kind]
    if not seeds or any(not e.unknowns for _, e in seeds):
        return None
    xr = abs(ax.values[-1] - ax.values[0]) or 1.0
    yr = abs(ay.values[-1] - ay.values[0]) or 1.0
    box = sorted((ax.values[0], ax.values[-1]))
    out, polylines = [], []
    for j, e in seeds:
        if any(_on_curve(p, e.value, ay.values[j], xr, yr) for p in polylines):
            continue
        if len(out) >= max_curves:
            break
        c = trace_event_curve(fam, e, ay.name, (ay.values[0], ay.values[-1]), box=box)
        if c is None:
            return None
        polylines.append(c.points)
        out.append(c.to_dict())
    missed = sum(1 for j, e in seeds
                 if not any(_on_curve(p, e.value, ay.values[j], xr, yr, tol=1e-6)
                            for p in polylines))
    if missed:
        for c in out:
            c["message"] += (f"; {missed} row events of this kind lie on no traced curve "
                             f"(more than {max_curves} curves, or a continuation stopped)")
            c["converged"] = False
    return out


def _event_plan_2d(fam, axes, fixed, n_checks, executor, workers) -> dict:
    """2D: the events along the first axis at every value of the second (each located by
    continuation + Newton; rows in parallel), chained into EventCurves; cells are the
    connected components (networkx) of the grid graph with every edge cut that an event
    crosses; one representative per cell plus a seeded check sample."""
    ax, ay = axes
    lo, hi = sorted((ax.values[0], ax.values[-1]))
    tasks = [(fam, ax.name, (lo, hi), EVENT_SAMPLES_2D) for _ in ay.values]
    kws = [{**fixed, ay.name: y} for y in ay.values]
    own = None
    if executor is None and workers > 1:
        own = executor = ProcessPoolExecutor(max_workers=workers, initializer=worker_setup,
                                             initargs=(os.getpid(),))
    try:
        if executor is None:
            found = [structure_events(*t, **kw) for t, kw in zip(tasks, kws)]
        else:
            futs = [executor.submit(structure_events, *t, **kw) for t, kw in zip(tasks, kws)]
            found = [f.result() for f in futs]
    finally:
        if own is not None:
            own.shutdown(wait=True)
    nx_, ny = len(ax.values), len(ay.values)
    xs = np.array(ax.values)
    # event labels of a grid point: for each kind, how many events of that kind lie below x
    kinds = sorted({e.kind for f in found for e in f.events})

    def label(i, j):
        return tuple(sum(1 for e in found[j].events if e.kind == k and e.value < xs[i])
                     for k in kinds)
    import networkx as nx  # lazy: only a 2D map needs the cell graph; `bhchem show` must not load it
    g = nx.Graph()
    g.add_nodes_from(range(nx_ * ny))
    lab = {(i, j): label(i, j) for i in range(nx_) for j in range(ny)}
    for i in range(nx_):
        for j in range(ny):
            for (a, b) in ((i + 1, j), (i, j + 1)):
                if a < nx_ and b < ny and lab[(i, j)] == lab[(a, b)]:
                    g.add_edge(i * ny + j, a * ny + b)
    cells = sorted((sorted(c) for c in nx.connected_components(g)), key=lambda c: c[0])
    cell_of, reps = {}, {}
    for k, members in enumerate(cells):
        for m in members:
            cell_of[m] = k
        ci = np.mean([m // ny for m in members])
        cj = np.mean([m % ny for m in members])
        reps[k] = min(members, key=lambda m: (m // ny - ci) ** 2 + (m % ny - cj) ** 2)
    rest = [m for m in range(nx_ * ny) if m not in set(reps.values())]
    rng = np.random.default_rng(CHECK_SEED)
    n_check = min(n_checks, len(rest))
    checks = sorted(int(i) for i in rng.choice(rest, size=n_check, replace=False)) \
        if n_check else []
    # curves: an event whose extended system is continuable is traced by pseudo-arclength
    # continuation in the second coupling (turning points followed) from its first row not
    # yet on a traced curve; the others: the n-th event of a kind in each row, chained along y
    curves = []
    for k in kinds:
        traced = _trace_curves(fam, found, k, ax, ay)
        if traced is not None:
            curves += traced
            continue
        for n in range(max(sum(1 for e in f.events if e.kind == k) for f in found)):
            pts, res, ok = [], [], True
            for j, f in enumerate(found):
                evs = [e for e in f.events if e.kind == k]
                if n < len(evs):
                    pts.append((evs[n].value, ay.values[j]))
                    res.append(max(evs[n].residuals.values()) if evs[n].residuals else 0.0)
                    ok &= evs[n].converged
            exact = {e.exact for f in found for e in f.events if e.kind == k and e.exact}
            curves.append(EventCurve(
                kind=k, couplings=(ax.name, ay.name), points=np.array(pts),
                residuals=np.array(res), converged=bool(ok),
                method="the 1D event located by continuation + Newton at every grid value of "
                       f"{ay.name}", message=f"{len(pts)} points; exact values at some points: "
                                             f"{', '.join(sorted(exact)[:3])}" if exact else
                f"{len(pts)} points").to_dict())
    unexplained = [dict(u, **{ay.name: ay.values[j]}) for j, f in enumerate(found)
                   for u in f.unexplained]
    # grid index of (i, j) in the scan's row order (axes[0] outer, axes[1] inner)
    return {"cells": cells, "cell_of": cell_of, "reps": reps, "checks": checks,
            "computed": sorted(set(reps.values()) | set(checks)), "curves": curves,
            "unexplained": unexplained, "events_per_row": [
                [e.to_dict() for e in f.events] for f in found]}


def _apply_plan_2d(plan, axes, rows, say) -> list:
    """Fill every row from its cell's representative and compare the check sample."""
    for m, r in enumerate(rows):
        r["cell"] = plan["cell_of"][m]
    _fill_from_representatives(rows, lambda m: plan["reps"][plan["cell_of"][m]])
    checks = []
    for m in plan["checks"]:
        k = plan["cell_of"][m]
        want, got = classification(rows[plan["reps"][k]]), classification(rows[m])
        agree = want == got and not rows[m]["error"]
        checks.append({"index": m, **{a.name: rows[m][a.name] for a in axes}, "cell": k,
                       "agree": agree, "expected": want, "found": got,
                       "error": rows[m]["error"]})
        if not agree:
            say(f"atlas check disagrees at {', '.join(f'{a.name}={rows[m][a.name]!r}' for a in axes)}: "
                f"the cell's structure is {want['structure']}, its own diagram gives "
                f"{got['structure']}")
    plan["events"] = [e for row in plan["events_per_row"] for e in row]
    plan["checks"] = {"seed": CHECK_SEED, "sample": len(checks),
                      "disagreements": sum(not c["agree"] for c in checks), "points": checks,
                      "cells": len(plan["cells"])}
    for u in plan["unexplained"]:
        say(f"structure events: unexplained change {u}")
    return []


#: most boundaries located along one grid edge before the rest of it is reported unresolved
MAX_BOUNDARIES_PER_EDGE = 12


def classification(row: dict) -> dict:
    """The classified columns of an atlas row.

    Parameters
    ----------
    row : dict
        A row of :func:`analyse_point`.

    Returns
    -------
    dict
        ``structure`` (the structure signature), ``n_critical`` (number of physical critical
        points) and ``cpI:kind`` for I = 1, 2, 3 (None when that point does not exist).  A
        change of any of them between neighbouring grid points is a boundary.
    """
    cls = {"structure": row.get("structure"), "n_critical": row.get("n_critical")}
    for i in (1, 2, 3):
        cls[f"cp{i}:kind"] = row.get(f"cp{i}:kind")
    return cls


def _boundary(name, base, lo, hi, lower, upper, steps, log, converged=True, note=""):
    point = dict(base)
    point[name] = math.sqrt(lo * hi) if log else 0.5 * (lo + hi)
    changed = sorted(k for k in set(lower) | set(upper) if lower.get(k) != upper.get(k))
    return {"along": name, "point": point, "bracket": [lo, hi],
            "between": [lower["structure"], upper["structure"]],
            "lower": lower, "upper": upper, "changed": changed, "steps": steps,
            "converged": converged, "note": note}


def refine_edge(family_name, family_file, fixed, base, name, lo, hi, log, c_lo, c_hi, refine,
                max_boundaries=MAX_BOUNDARIES_PER_EDGE, admissible=(None, ())):
    """Locate every change of the classification along one grid edge (a worker task).

    Bisection on the classification c(x) (:func:`classification`): the bracket [l, h] keeps
    c(l) equal to the class at the start of the segment and c(h) different, halving the bracket
    (geometric midpoint on a log axis) ``refine`` times, so a located boundary lies within
    (hi - lo) / 2^refine (linear axis).  If the class found at h is not yet the class of the
    far end of the edge, the search continues from h, so that every classified column that
    differs between the two grid points changes at one of the returned boundaries.

    Parameters
    ----------
    base : dict
        The other grid coordinates of the edge.
    lo, hi : float
        The edge along parameter ``name``; ``c_lo`` and ``c_hi`` are the classifications there.
    refine : int
        Bisection steps per boundary (0: the boundary is the edge itself).
    max_boundaries : int
        Most boundaries located on the edge; the rest of the edge is then reported as one
        unresolved boundary (a count, not a time limit).

    Returns
    -------
    list of dict
        Boundaries in order along the edge, each with ``bracket``, ``point`` (the midpoint),
        ``lower``/``upper`` classifications, ``changed`` columns, ``steps`` and ``converged``
        (False with a one-line ``note`` when a point in the bracket failed or the count
        ran out).
    """
    out = []
    a, c_a = lo, c_lo
    while True:
        b, c_b = hi, c_hi
        for step in range(refine):
            mid = math.sqrt(a * b) if log else 0.5 * (a + b)
            row = analyse_point(family_name, family_file, {**fixed, **base, name: mid},
                                admissible)
            if row["error"]:
                note = (f"not located: the point {name}={mid!r} failed ({row['error']}); "
                        f"the change lies in the bracket")
                out.append(_boundary(name, base, a, hi, c_a, c_hi, step, log, False, note))
                return out
            c_m = classification(row)
            if c_m == c_a:
                a = mid
            else:
                b, c_b = mid, c_m
        out.append(_boundary(name, base, a, b, c_a, c_b, refine, log))
        if c_b == c_hi:
            return out
        if len(out) >= max_boundaries:
            out.append(_boundary(name, base, b, hi, c_b, c_hi, 0, log, False,
                                 f"not located: more than {max_boundaries} changes along this "
                                 f"edge; use a finer grid"))
            return out
        a, c_a = b, c_b


def _boundaries(family_name, family_file, fixed, axes, rows, refine, executor=None,
                admissible=(None, ())):
    """Every grid edge whose two ends differ in any classified column, refined by bisection.

    An edge with a failed end is listed as not located (its class on that side is unknown).
    """
    shape = [len(a.values) for a in axes]
    grid = np.empty(shape, dtype=object)
    for flat, r in enumerate(rows):
        grid[np.unravel_index(flat, shape)] = r
    tasks, slots = [], []
    for dim, a in enumerate(axes):
        for idx in itertools.product(*(range(s) for s in shape)):
            if idx[dim] + 1 >= shape[dim]:
                continue
            nxt = list(idx)
            nxt[dim] += 1
            r0, r1 = grid[idx], grid[tuple(nxt)]
            c0, c1 = classification(r0), classification(r1)
            lo, hi = a.values[idx[dim]], a.values[idx[dim] + 1]
            base = {ax.name: ax.values[i] for ax, i in zip(axes, idx)}
            del base[a.name]
            if r0["error"] or r1["error"]:
                bad = lo if r0["error"] else hi
                slots.append([_boundary(a.name, base, lo, hi, c0, c1, 0, a.spacing == "log",
                                        False, f"not located: the grid point {a.name}={bad!r} "
                                        f"failed (see its row)")])
                continue
            if c0 == c1:
                continue
            slots.append(None)
            tasks.append((family_name, family_file, fixed, base, a.name, lo, hi,
                          a.spacing == "log", c0, c1, max(int(refine), 0),
                          MAX_BOUNDARIES_PER_EDGE, admissible))
    if executor is None or refine <= 0:
        results = [refine_edge(*t) for t in tasks]
    else:
        futs = [executor.submit(refine_edge, *t) for t in tasks]
        results = [f.result() for f in futs]  # in edge order: deterministic
    it = iter(results)
    out = []
    for slot in slots:
        out.extend(next(it) if slot is None else slot)
    return out


def _assemble(family_name, fam, axes, fixed, rows, boundaries):
    ex = bind(fam, **{**fixed, **{a.name: a.values[0] for a in axes}})
    dims = ex.derivation.length_dimensions
    ref = next(((nm, n) for nm, n in dims.items() if n != 0 and ex.values[nm] != 0), None)
    combos = []
    if ref:
        for nm, n in dims.items():
            if nm != ref[0] and n != 0:
                combos.append(f"{nm} * {ref[0]}^({-n}/{ref[1]})")
    note = (f"results depend only on the scale-free combinations "
            f"{', '.join(combos) if combos else '(none: the family has one scale)'} "
            f"(reference length from {ref[0]}); grid points with equal combinations were "
            f"computed once" if ref else "the family has no dimensionful parameter")
    named = {r["structure"] for r in rows}
    named |= {s for b in boundaries for s in b["between"]}
    return {"family": family_name, "grid": [a.spec for a in axes], "fixed": fixed,
            "scale_invariance": note, "rows": rows, "boundaries": boundaries,
            "structures": sorted(named),
            "errors": sum(1 for r in rows if r["error"]),
            "ensemble": ex.family.ensemble_record(),
            "version": __version__}


def _columns(rows, axes):
    first = [a.name for a in axes] + ["n_critical", "structure"]
    extra = sorted({k for r in rows for k in r} - set(first) - {"index", "error"})
    return first + extra + ["error"]


def _write_outputs(out_dir, doc, axes):
    """Write atlas.png (if it can be drawn), then atlas.csv and atlas.json.

    A figure that cannot be written is recorded as ``doc['figure_error']`` (one line) and a
    figure left by an earlier run is removed, so that no file claims to show this atlas.
    Failing to write the table raises OSError.
    """
    png = os.path.join(out_dir, "atlas.png")
    doc.pop("figure_error", None)
    try:
        _figure(out_dir, doc, axes)
    except Exception as exc:  # the table is the result; say why the figure is missing
        doc["figure_error"] = f"atlas.png was not written: {type(exc).__name__}: {exc}"
        try:
            os.remove(png)
        except FileNotFoundError:
            pass
    rows = doc["rows"]
    cols = _columns(rows, axes)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(cols)
    for r in rows:
        w.writerow(["" if r.get(c) is None else (repr(r[c]) if isinstance(r.get(c), float)
                                                  else r.get(c, "")) for c in cols])
    _atomic_write(os.path.join(out_dir, "atlas.csv"), buf.getvalue())
    _atomic_write(os.path.join(out_dir, "atlas.json"), _dumps(doc))


def structure_runs(x, structures, events):
    """The runs of equal structure along a 1D grid as (structure, lo, hi) spans: a run ends
    halfway to the next grid point, or at the located event between the two points when
    there is one (so the colours change exactly where the events are drawn)."""
    order = np.argsort(x)
    xs = x[order]
    st = [structures[i] for i in order]
    half = (xs[1] - xs[0]) / 2 if len(xs) > 1 else 0.5 * max(abs(xs[0]), 1.0) * 0.02
    cuts = []
    for i in range(len(xs) - 1):
        inside = [e for e in events if xs[i] <= e <= xs[i + 1]]
        cuts.append(inside[0] if inside and st[i] != st[i + 1] else (xs[i] + xs[i + 1]) / 2)
    lo_end = xs[0] - (xs[1] - xs[0]) / 2 if len(xs) > 1 else xs[0] - half
    hi_end = xs[-1] + (xs[-1] - xs[-2]) / 2 if len(xs) > 1 else xs[-1] + half
    edges = [lo_end, *cuts, hi_end]
    runs, start = [], 0
    for i in range(1, len(xs) + 1):
        if i == len(xs) or st[i] != st[start]:
            runs.append((st[start], edges[start], edges[i]))
            start = i
    return runs


def _figure(out_dir, doc, axes):
    rows = doc["rows"]
    structures = doc["structures"]
    color = {s: PALETTE[i % len(PALETTE)] for i, s in enumerate(structures)}
    with styled() as plt:
        if len(axes) == 1:
            fig, ax = plt.subplots(figsize=(6.0, 2.2))
            x = np.array(axes[0].values, float)
            events = doc.get("events") or []
            labelled = set()
            for s, lo, hi in structure_runs(x, [r["structure"] for r in rows],
                                      [e["value"] for e in events if e["converged"]]):
                ax.axvspan(lo, hi, ymin=0.4, ymax=0.6, color=color[s], lw=0,
                           label=None if s in labelled else s)
                labelled.add(s)
            for b in ([] if events else doc["boundaries"]):
                if b["converged"]:
                    ax.axvline(b["point"][axes[0].name], color="black", lw=0.8, ls="--")
            styles = ("-", "--", ":", "-.")
            kinds = sorted({e["kind"] for e in events})
            for e in events:  # one line per event, labelled by its kind (one legend entry)
                j = kinds.index(e["kind"])
                label = e["kind"] if e is next(f for f in events if f["kind"] == e["kind"]) \
                    else None
                ax.axvline(e["value"], color="black", lw=1.0, ls=styles[j % len(styles)],
                           label=label if e["converged"] else f"{label} (not converged)"
                           if label else None)
            ax.set_yticks([])
            ax.set_xlabel(axes[0].name)
            if axes[0].spacing == "log":
                ax.set_xscale("log")
        else:
            fig, ax = plt.subplots(figsize=(5.6, 4.2))
            a0, a1 = axes[0], axes[1]
            shape = (len(a0.values), len(a1.values)) + tuple(len(a.values) for a in axes[2:])
            grid = np.array([structures.index(r["structure"]) for r in rows]).reshape(shape)
            if grid.ndim == 3:
                grid = grid[:, :, 0]
            from matplotlib.colors import ListedColormap  # lazy: matplotlib only for the figure
            cmap = ListedColormap([color[s] for s in structures])
            ax.pcolormesh(a0.values, a1.values, grid.T, cmap=cmap, shading="nearest",
                          vmin=-0.5, vmax=len(structures) - 0.5)
            located = [b for b in doc["boundaries"] if b["converged"]]
            bx = [b["point"][a0.name] for b in located]
            by = [b["point"][a1.name] for b in located]
            if located:
                ax.plot(bx, by, ".", color="black", ms=3, label="refined boundary")
            styles = ("-", "--", ":", "-.")
            kinds = sorted({c["kind"] for c in doc.get("event_curves") or []})
            for c in doc.get("event_curves") or []:
                pts = np.array(c["points"], float).reshape(-1, 2)
                first = c is next(d for d in doc["event_curves"] if d["kind"] == c["kind"])
                ax.plot(pts[:, 0], pts[:, 1], color="black", lw=1.2,
                        ls=styles[kinds.index(c["kind"]) % len(styles)],
                        label=c["kind"] if first else None)
            for s in structures:
                ax.plot([], [], "s", color=color[s], label=s)
            ax.set_xlabel(a0.name)
            ax.set_ylabel(a1.name)
            if a0.spacing == "log":
                ax.set_xscale("log")
            if a1.spacing == "log":
                ax.set_yscale("log")
        swapped = ", ".join((doc.get("ensemble") or {}).get("swapped") or ())
        where = f" at fixed {swapped}" if swapped else ""
        ax.set_title(f"{doc['family']}{where}: structure signature")
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0))
        save(PlotResult(fig, "atlas"), os.path.join(out_dir, "atlas.png"))
