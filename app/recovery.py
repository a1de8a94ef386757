"""The recovery file: the drawing written every minute while it has unsaved changes.

The file is removed when the app closes normally, so one that is still there at start-up
means the last session ended without saving; the app then offers to restore it.  It is
written atomically like any scheme file and holds the scheme (format version 1) and the
path of the file it was opened from.
"""
from __future__ import annotations

import json
import os
import time
from pathlib import Path

from kinestat.core.io import SchemeError, atomic_write_text, scheme_from_dict, scheme_to_dict
from kinestat.core.model import Scheme

RECOVERY_FORMAT = "kinestat-recovery"


def default_recovery_path() -> Path:
    """Where the recovery file lives (KINESTAT_RECOVERY overrides it)."""
    env = os.environ.get("KINESTAT_RECOVERY")
    if env:
        return Path(env)
    base = os.environ.get("XDG_STATE_HOME") or os.path.join(os.path.expanduser("~"), ".local", "state")
    return Path(base) / "kinestat" / "recovery.json"


def write_recovery(path: Path, scheme: Scheme, source: Path | None) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    doc = {"format": RECOVERY_FORMAT, "version": 1, "written": time.strftime("%Y-%m-%d %H:%M:%S"),
           "source": str(source) if source else None, "scheme": scheme_to_dict(scheme)}
    atomic_write_text(path, json.dumps(doc, indent=1) + "\n")


def read_recovery(path: Path) -> tuple[Scheme, Path | None, str]:
    """(scheme, source path, time written); raises SchemeError if the file is unusable."""
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise SchemeError(f"recovery file {path}: cannot be read ({exc})") from None
    if not isinstance(data, dict) or data.get("format") != RECOVERY_FORMAT:
        raise SchemeError(f'recovery file {path}: field "format" must be "{RECOVERY_FORMAT}"')
    scheme = scheme_from_dict(data.get("scheme"))
    src = data.get("source")
    return scheme, (Path(src) if isinstance(src, str) and src else None), str(data.get("written", ""))


def clear_recovery(path: Path) -> None:
    try:
        Path(path).unlink()
    except FileNotFoundError:
        pass
