"""Progress displays (bhchem.present.progress): which display is chosen where, and what each
shows.  No real notebook: IPython, its display and tqdm's notebook bar are stand-ins."""
import io
import sys
import types

import pytest

from bhchem.present import progress as prog


@pytest.mark.parametrize("quiet, notebook, widgets, terminal, expected", [
    (True, True, True, True, "none"),
    (False, True, True, False, "widget"),
    (False, True, False, True, "html"),
    (False, False, True, True, "terminal"),
    (False, False, False, False, "none"),
])
def test_choose_display(quiet, notebook, widgets, terminal, expected):
    assert prog.choose_display(quiet, notebook, widgets, terminal) == expected


def _fake_ipython(monkeypatch, shell_class_name):
    shell = type(shell_class_name, (), {})() if shell_class_name else None
    shown = []

    class Handle:
        def update(self, obj):
            shown.append(obj.data)

    def display(obj, display_id=False):
        assert display_id is True
        shown.append(obj.data)
        return Handle()

    ipython = types.ModuleType("IPython")
    ipython.get_ipython = lambda: shell
    disp = types.ModuleType("IPython.display")
    disp.HTML = lambda data: types.SimpleNamespace(data=data)
    disp.display = display
    ipython.display = disp
    monkeypatch.setitem(sys.modules, "IPython", ipython)
    monkeypatch.setitem(sys.modules, "IPython.display", disp)
    return shown


def test_in_notebook_only_inside_a_kernel(monkeypatch):
    monkeypatch.delitem(sys.modules, "IPython", raising=False)
    assert not prog.in_notebook()                     # IPython not even loaded
    _fake_ipython(monkeypatch, "TerminalInteractiveShell")
    assert not prog.in_notebook()                     # IPython in a terminal
    _fake_ipython(monkeypatch, None)
    assert not prog.in_notebook()                     # IPython imported, no shell
    _fake_ipython(monkeypatch, "ZMQInteractiveShell")
    assert prog.in_notebook()                         # a Jupyter kernel


def test_notebook_without_widgets_gets_an_html_bar(monkeypatch):
    shown = _fake_ipython(monkeypatch, "ZMQInteractiveShell")
    monkeypatch.setattr(prog, "widgets_available", lambda: False)
    stream = io.StringIO()
    bar = prog.progress_display("scan", 10, unit="points", stream=stream)
    assert bar.kind == "html"
    bar.advance(3)
    bar(7, 10)                                        # the analyses' callback form
    bar(None)
    assert bar.closed and stream.getvalue() == ""     # nothing on the terminal
    assert "value='0' max='10'" in shown[0]
    assert "value='3' max='10'" in shown[1] and "scan: 3/10 points" in shown[1]
    assert "value='7' max='10'" in shown[-1]


def test_notebook_with_tqdm_and_widgets_gets_the_widget_bar(monkeypatch):
    _fake_ipython(monkeypatch, "ZMQInteractiveShell")
    monkeypatch.setattr(prog, "widgets_available", lambda: True)
    made = []

    class FakeTqdm:
        def __init__(self, total, desc, unit):
            self.total, self.desc, self.unit, self.n, self.closed = total, desc, unit, 0, False
            made.append(self)

        def refresh(self):
            pass

        def close(self):
            self.closed = True

    notebook = types.ModuleType("tqdm.notebook")
    notebook.tqdm = FakeTqdm
    monkeypatch.setitem(sys.modules, "tqdm", types.ModuleType("tqdm"))
    monkeypatch.setitem(sys.modules, "tqdm.notebook", notebook)
    bar = prog.progress_display("isobars", 48)
    assert bar.kind == "widget"
    bar.advance(5)
    bar.close()
    (t,) = made
    assert (t.total, t.desc, t.n, t.closed) == (48, "isobars", 5, True)


def test_a_widget_bar_that_cannot_load_falls_back_to_html(monkeypatch):
    shown = _fake_ipython(monkeypatch, "ZMQInteractiveShell")
    monkeypatch.setattr(prog, "widgets_available", lambda: True)
    notebook = types.ModuleType("tqdm.notebook")

    def broken(**kw):
        raise ImportError("IProgress not found")
    notebook.tqdm = broken
    monkeypatch.setitem(sys.modules, "tqdm.notebook", notebook)
    bar = prog.progress_display("scan", 4)
    assert bar.kind == "html" and shown


class _Tty(io.StringIO):
    def isatty(self):
        return True


def test_terminal_line_and_silence_elsewhere(monkeypatch):
    monkeypatch.delitem(sys.modules, "IPython", raising=False)
    tty = _Tty()
    bar = prog.progress_display("scan", 5, unit="points", stream=tty)
    assert bar.kind == "terminal"
    bar.advance(2)
    bar.close()
    out = tty.getvalue()
    assert out.startswith("\rscan: 2/5 points") and out.endswith("\n")
    pipe = io.StringIO()                              # a log file: no \r noise
    bar = prog.progress_display("scan", 5, stream=pipe)
    bar.advance(5)
    bar.close()
    assert bar.kind == "none" and pipe.getvalue() == ""
    assert prog.progress_display("scan", 5, quiet=True, stream=_Tty()).kind == "none"
