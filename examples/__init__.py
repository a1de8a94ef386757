"""Bundled example schemes (JSON, kinestat-scheme format version 1).

Each file carries an ``expected`` block (verdict, m, s) that the test suite checks.
"""
from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def example_paths() -> list[Path]:
    """Paths of every bundled example, sorted by file name."""
    root = files(__name__)
    return sorted(Path(str(p)) for p in root.iterdir() if str(p).endswith(".json"))
