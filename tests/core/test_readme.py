"""The README's quick start and CI stay in step (the brief for CI: run the README's test command)."""
from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _quick_start_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    return [block.strip() for block in re.findall(r"```sh\n(.*?)```", section, re.S)]


def test_quick_start_is_exactly_two_commands():
    cmds = _quick_start_commands()
    assert len(cmds) == 2
    assert all("\n" not in c for c in cmds)
    assert "kinestat examples/" in cmds[0]
    assert '".[test]"' in cmds[1] and cmds[1].endswith("pytest")


def test_ci_runs_the_readme_test_command_verbatim():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    lines = [ln.strip() for ln in ci.splitlines() if ln.strip() and not ln.strip().startswith("#")]
    assert _quick_start_commands()[1] in lines
    assert "rm -rf .venv" in lines  # a fresh virtual environment every run


def test_quick_start_example_exists_and_loads():
    from kinestat.core.io import load

    path = _quick_start_commands()[0].split("kinestat ", 1)[1].split()[0]
    scheme = load(ROOT / path)
    assert scheme.members
