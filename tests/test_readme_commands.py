"""Every ``bhchem`` command line the README shows runs on the installed console script.

The README is the first thing a new user tries; a crash there costs the trust the numbers
earn.  Each line of a ``bash`` block that runs ``bhchem`` (also after ``&&`` or behind
``NAME=value`` environment assignments) is run in a fresh folder holding a copy of
``examples/`` (so ``--family-file examples/...`` paths resolve), and must exit 0 with no
traceback and no "internal error".  Lines are run two at a time (the machine has 2 cores).
"""
from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"


def readme_command_lines(text: str) -> list[str]:
    """The ``bhchem ...`` commands of the README's ``bash`` blocks, in order, comments cut."""
    lines = []
    for block in re.findall(r"```bash\n(.*?)```", text, flags=re.S):
        for raw in block.splitlines():
            line = raw.split(" #", 1)[0].strip()
            for part in (p.strip() for p in line.split("&&")):
                words = shlex.split(part) if part else []
                while words and re.fullmatch(r"[A-Z_][A-Z0-9_]*=.*", words[0]):
                    words = words[1:]
                if words and words[0] == "bhchem":
                    lines.append(part)
    return lines


def console_script() -> str:
    """The installed ``bhchem`` next to this interpreter (the README installs it with pip)."""
    exe = Path(sys.executable).parent / "bhchem"
    found = str(exe) if exe.exists() else shutil.which("bhchem")
    if not found:
        pytest.fail("the bhchem console script is not installed: pip install . (see README)")
    return found


def test_readme_lists_the_commands_it_documents():
    """The parser sees the README's command table (a guard against a silent empty list)."""
    cmds = readme_command_lines(README.read_text())
    verbs = {shlex.split(c.split("bhchem", 1)[1])[0] for c in cmds}
    assert {"demo", "families", "show", "critical", "exponents", "isobar", "phases", "plot",
            "report", "scan", "expansion", "engine", "curvature", "topology",
            "landscape"} <= verbs


def _run(line: str, workdir: Path, exe: str):
    words = shlex.split(line)
    env = dict(os.environ)
    while re.fullmatch(r"[A-Z_][A-Z0-9_]*=.*", words[0]):
        name, _, value = words.pop(0).partition("=")
        env[name] = value
    words[0] = exe
    env.pop("BHCHEM_DEBUG", None)
    proc = subprocess.run(words, cwd=workdir, env=env, capture_output=True, text=True,
                          stdin=subprocess.DEVNULL)
    return line, proc


@pytest.mark.slow
def test_every_readme_command_line_runs(tmp_path):
    exe = console_script()
    cmds = readme_command_lines(README.read_text())
    folders = []
    for i, _ in enumerate(cmds):
        work = tmp_path / f"cmd{i:02d}"
        shutil.copytree(ROOT / "examples", work / "examples")
        folders.append(work)
    with ThreadPoolExecutor(max_workers=2) as pool:
        results = list(pool.map(_run, cmds, folders, [exe] * len(cmds)))
    failures = []
    for line, proc in results:
        text = proc.stdout + proc.stderr
        if proc.returncode != 0 or "Traceback" in text or "internal error" in text:
            failures.append(f"{line}\n  exit {proc.returncode}: {text.strip()[-600:]}")
    assert not failures, "README command lines that fail:\n" + "\n".join(failures)
