"""Progress of long work, shown where the user looks: a notebook progress bar in Jupyter,
one rewritten line on a terminal, nothing otherwise.

The analyses only report counts (a ``progress(done, total)`` callback, or the atlas's finished
chunks); this module turns them into a display.  Which display is chosen
(:func:`choose_display`) depends on three facts only:

============================  =========================================================
where                         display
============================  =========================================================
a Jupyter kernel, with tqdm   ``widget``: ``tqdm.notebook`` (an ipywidgets bar)
and ipywidgets importable
a Jupyter kernel without      ``html``: an HTML ``<progress>`` bar updated in place
them                          (``IPython.display`` with a display id)
a terminal (stderr is a TTY)  ``terminal``: one line on stderr, rewritten with ``\\r``
anything else, or quiet       ``none``: silent (a log file or a pipe gets no ``\\r`` noise)
============================  =========================================================

tqdm and ipywidgets are optional (``pip install "bhchem[notebook]"``) and imported only
when a widget bar is shown; IPython is imported only inside a running kernel (where it is
already loaded).
"""
from __future__ import annotations

import html
import importlib.util
import sys
import time

DISPLAYS = ("widget", "html", "terminal", "none")


def in_notebook() -> bool:
    """True inside a Jupyter kernel (an IPython ``ZMQInteractiveShell``), without importing
    IPython when it is not already loaded."""
    ipython = sys.modules.get("IPython")
    if ipython is None:
        return False
    try:
        shell = ipython.get_ipython()
    except Exception:  # an IPython without a shell, or a broken one: not a notebook
        return False
    return shell is not None and type(shell).__name__ == "ZMQInteractiveShell"


def widgets_available() -> bool:
    """Can ``tqdm.notebook`` draw a widget bar (tqdm and ipywidgets importable)?"""
    return all(importlib.util.find_spec(m) is not None for m in ("tqdm", "ipywidgets"))


def choose_display(quiet: bool, notebook: bool, widgets: bool, terminal: bool) -> str:
    """Which display shows progress (one of :data:`DISPLAYS`; see the module docstring)."""
    if quiet:
        return "none"
    if notebook:
        return "widget" if widgets else "html"
    return "terminal" if terminal else "none"


class Progress:
    """A progress display of ``total`` steps.

    ``advance(n)`` adds finished steps, ``set(done)`` sets the count, ``close()`` ends it;
    calling it as ``progress(done, total)`` (``done=None`` closes) fits the ``progress``
    callbacks of the analyses (e.g. :func:`bhchem.phase_diagram`).
    """

    kind = "none"

    def __init__(self, what: str, total: int | None = None, unit: str = "", stream=None):
        self.what, self.total, self.unit = what, total, unit
        self.stream = stream if stream is not None else sys.stderr
        self.done = 0
        self.t0 = time.perf_counter()
        self.closed = False

    def __call__(self, done, total=None) -> None:
        if done is None:
            self.close()
            return
        if total is not None:
            self.total = total
        self.set(done)

    def advance(self, n: int = 1) -> None:
        self.set(self.done + n)

    def set(self, done: int) -> None:
        self.done = done
        if not self.closed:
            self._show()

    def close(self) -> None:
        if not self.closed:
            self.closed = True
            self._finish()

    def text(self) -> str:
        """``'scan: 3/10 points, 1.20/s, ETA 6 s'`` (rate and ETA once something is done)."""
        unit = f" {self.unit}" if self.unit else ""
        out = f"{self.what}: {self.done}/{self.total if self.total is not None else '?'}{unit}"
        dt = time.perf_counter() - self.t0
        if self.done and dt > 0:
            rate = self.done / dt
            out += f", {rate:.2f}/s"
            if self.total is not None and self.done < self.total:
                out += f", ETA {(self.total - self.done) / rate:.0f} s"
        return out

    def _show(self) -> None:
        pass

    def _finish(self) -> None:
        pass


class TerminalProgress(Progress):
    """One line on the stream, rewritten in place (``\\r``), ended by a newline."""

    kind = "terminal"

    def _show(self) -> None:
        self.stream.write(f"\r{self.text()}   ")
        self.stream.flush()

    def _finish(self) -> None:
        self.stream.write("\n")
        self.stream.flush()


class HtmlProgress(Progress):
    """An HTML ``<progress>`` bar in the notebook, updated in place through a display id."""

    kind = "html"

    def __init__(self, *args, **kw):
        super().__init__(*args, **kw)
        from IPython.display import HTML, display  # lazy: only inside a running kernel
        self._html = HTML
        self._handle = display(HTML(self.html()), display_id=True)

    def html(self) -> str:
        """The bar as HTML: ``<progress value=done max=total>`` and :meth:`text`."""
        top = self.total if self.total else 1
        return (f"<div><progress value='{min(self.done, top)}' max='{top}' "
                f"style='width:24em'></progress> {html.escape(self.text())}</div>")

    def _show(self) -> None:
        if self._handle is not None:
            self._handle.update(self._html(self.html()))

    _finish = _show


class WidgetProgress(Progress):
    """tqdm's notebook bar (an ipywidgets widget)."""

    kind = "widget"

    def __init__(self, *args, **kw):
        super().__init__(*args, **kw)
        from tqdm.notebook import tqdm  # lazy: optional (bhchem[notebook]), only in a kernel
        self._bar = tqdm(total=self.total, desc=self.what, unit=self.unit or "it")

    def _show(self) -> None:
        self._bar.n = self.done
        self._bar.refresh()

    def _finish(self) -> None:
        self._bar.n = self.done
        self._bar.close()


_CLASSES = {"widget": WidgetProgress, "html": HtmlProgress, "terminal": TerminalProgress,
            "none": Progress}


def progress_display(what: str, total: int | None = None, unit: str = "",
                     quiet: bool = False, stream=None) -> Progress:
    """The progress display for where this runs (:func:`choose_display`).

    Parameters
    ----------
    what : str
        What is counted (``'scan'``, ``'isobars'``): the bar's label.
    total : int, optional
        Number of steps (may be given later through ``progress(done, total)``).
    unit : str
        Name of a step (``'points'``).
    quiet : bool
        No display at all.
    stream : file, optional
        Where the terminal line goes (default ``sys.stderr``); a stream that is not a TTY
        gets nothing.

    Returns
    -------
    Progress
        Its ``kind`` says which display was chosen.
    """
    stream = stream if stream is not None else sys.stderr
    terminal = bool(getattr(stream, "isatty", lambda: False)())
    notebook = in_notebook()
    kind = choose_display(quiet, notebook, notebook and widgets_available(), terminal)
    try:
        return _CLASSES[kind](what, total, unit, stream)
    except ImportError:  # tqdm present but its notebook bar cannot load (an old ipywidgets)
        return HtmlProgress(what, total, unit, stream)
