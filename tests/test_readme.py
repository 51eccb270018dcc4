"""Every command the README shows runs as written (issue 17), in a fresh temporary folder.

The two Quick-start lines (create a virtual environment, install, run the demo or the tests) are
left out: they are what CI itself runs (``.ci/run``).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

README = Path(__file__).resolve().parent.parent / "README.md"


def _blocks(language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", README.read_text(encoding="utf-8"), flags=re.S)


def readme_commands() -> list[str]:
    """The README's shell commands, in order, without the Quick-start installation lines."""
    lines = [line.strip() for block in _blocks("bash") for line in block.splitlines()]
    return [line for line in lines if line and not line.startswith(("#", "python3 -m venv"))]


def test_readme_has_commands():
    cmds = readme_commands()
    assert any(c.startswith("reorder order") for c in cmds) and any(c.startswith("reorder compare") for c in cmds)


def test_readme_commands_run_as_written(tmp_path):
    env = dict(os.environ)
    env["PATH"] = str(Path(sys.executable).parent) + os.pathsep + env.get("PATH", "")
    for cmd in readme_commands():
        r = subprocess.run(["bash", "-c", f"set -o pipefail; {cmd}"], cwd=tmp_path, env=env, capture_output=True,
                           text=True, timeout=600)
        assert r.returncode == 0, f"README command failed: {cmd}\n{r.stderr[-2000:]}"


@pytest.mark.parametrize("block", _blocks("python"))
def test_readme_python_runs_as_written(tmp_path, block):
    r = subprocess.run([sys.executable, "-c", block], cwd=tmp_path, capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr[-2000:]
