"""A result computed once per test session and shared by the pytest-xdist workers.

Two tests of one file that need the same expensive, deterministic result (a phase diagram)
may run in different worker processes; each would compute it.  :func:`shared` computes it in
the first worker that asks, under a lock file in the session's folder (``conftest.py`` gives
both workers one folder), and pickles it there; a worker that asks later (or waits on the
lock meanwhile) loads the same object.  A failure in ``compute`` is raised in the worker that
ran it and leaves nothing behind, so the next one computes it again.
"""
from __future__ import annotations

import os
import pickle
import tempfile

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX: every worker computes its own
    fcntl = None

SESSION_FOLDER = "BHCHEM_TEST_SESSION_CACHE_DIR"


def shared(name: str, compute):
    """``compute()`` once per test session, across worker processes (``name`` identifies it:
    the same name must mean the same computation)."""
    folder = os.environ.get(SESSION_FOLDER)
    if fcntl is None or not folder:
        return compute()
    path = os.path.join(folder, f"test-shared-{name}.pickle")
    with open(path + ".lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        try:
            if os.path.exists(path):
                with open(path, "rb") as fh:
                    return pickle.load(fh)
            value = compute()
            fd, tmp = tempfile.mkstemp(dir=folder, suffix=".tmp")
            with os.fdopen(fd, "wb") as fh:
                pickle.dump(value, fh, protocol=pickle.HIGHEST_PROTOCOL)
            os.replace(tmp, path)
            return value
        finally:
            fcntl.flock(lock, fcntl.LOCK_UN)
