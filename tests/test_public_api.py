"""The public API: every name of ``bhchem.__all__`` imports in a fresh interpreter, and the
distribution installs no generic top-level names (``chemistry``, ``models``)."""
import subprocess
import sys

import bhchem


def _fresh(code: str) -> subprocess.CompletedProcess:
    # run outside the checkout, so that its folders cannot shadow the installed package
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd="/", stdin=subprocess.DEVNULL)


def test_every_public_name_imports_in_a_fresh_interpreter():
    names = [n for n in bhchem.__all__ if n != "__version__"]
    # one name per statement: a name that is also a submodule (the 0.1 RecursionError)
    # or a lazy attribute failing would show up here
    code = "\n".join(f"from bhchem import {n}" for n in names) + "\nprint('ok')"
    proc = _fresh(code)
    assert proc.returncode == 0 and proc.stdout.strip() == "ok", proc.stderr[-2000:]
    for name in ("derive", "Derivation"):        # the two names that crashed in 0.1
        proc = _fresh(f"from bhchem import {name}; print({name}.__module__)")
        assert proc.returncode == 0, proc.stderr[-2000:]


def test_all_lists_only_existing_names():
    missing = [n for n in bhchem.__all__ if not hasattr(bhchem, n)]
    assert not missing


def test_generic_names_are_not_importable_from_this_distribution():
    code = ("import importlib.util as u\n"
            "print(u.find_spec('chemistry') is None, u.find_spec('models') is None)")
    proc = _fresh(code)
    assert proc.stdout.split() == ["True", "True"], proc.stdout + proc.stderr


def test_a_research_folder_with_its_own_models_module_does_not_break_bhchem(tmp_path):
    """A project folder with ``models.py`` (common in research code) next to the notebook."""
    (tmp_path / "models.py").write_text("X = 1\n")
    (tmp_path / "chemistry").mkdir()
    (tmp_path / "chemistry" / "__init__.py").write_text("raise ImportError('not ours')\n")
    proc = subprocess.run([sys.executable, "-c",
                           "import bhchem; print(len(bhchem.available_families()))"],
                          capture_output=True, text=True, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert int(proc.stdout) >= 8


def test_import_and_show_load_no_solver_graph_or_figure_library():
    """Start-up: ``import bhchem`` and ``bhchem show`` import neither scipy's solvers nor
    networkx nor matplotlib (they are loaded when an analysis or a figure needs them)."""
    code = ("import sys, io, contextlib\n"
            "import bhchem\n"
            "from bhchem.cli.main import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    main(['show', 'rn-ads', '-p', 'Q=1'])\n"
            "heavy = ('scipy.optimize', 'scipy.special', 'networkx', 'matplotlib')\n"
            "print(sorted(m for m in heavy if m in sys.modules))")
    proc = _fresh(code)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert proc.stdout.strip() == "[]"
