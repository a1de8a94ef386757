"""Batch checking: `kinestat check FILE... [--json] [--fail-on unstable]`.

Expected verdicts come from each example's own "expected" block (worked by hand count and rule,
see tests/core/test_examples.py) and from Maxwell's rule for the inline truss below.
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from kinestat.examples import example_paths

EXAMPLES = {p.name: p for p in example_paths()}


def _run(*args: str) -> subprocess.CompletedProcess:
    code = "import sys; from kinestat.app.cli import main; sys.exit(main(sys.argv[1:]))"
    return subprocess.run([sys.executable, "-c", code, "check", *args], capture_output=True, text=True,
                          timeout=300)


@pytest.fixture
def folder(tmp_path: Path) -> list[Path]:
    picks = ["yard_gantry.json", "footbridge_warren.json", "four_hinged_portal.json"]
    out = []
    for name in picks:
        dst = tmp_path / name
        dst.write_text(EXAMPLES[name].read_text(encoding="utf-8"), encoding="utf-8")
        out.append(dst)
    bad = tmp_path / "broken.json"
    bad.write_text('{"format": "kinestat-scheme", "version": 1, "nodes": [], "members": [{"id": "x"}]}',
                   encoding="utf-8")
    out.append(bad)
    return out


def _expected(path: Path) -> dict:
    return json.loads(path.read_text(encoding="utf-8"))["expected"]


def test_one_line_per_scheme_and_bad_file_on_its_line(folder):
    r = _run(*map(str, folder))
    lines = [ln for ln in r.stdout.splitlines() if ln.strip()]
    assert r.returncode == 2  # one file could not be read
    for path in folder[:3]:
        (line,) = [ln for ln in lines if ln.startswith(str(path))]
        exp = _expected(path)
        fields = line.split("\t")
        assert fields[1] == exp["verdict"]
        assert fields[2] == f"m={exp['mechanisms']}" and fields[3] == f"s={exp['self_stress']}"
        assert fields[4].startswith("warnings=")
    (bad_line,) = [ln for ln in lines if ln.startswith(str(folder[3]))]
    assert "error" in bad_line and 'member "x"' in bad_line  # names the item
    assert "Traceback" not in r.stdout + r.stderr


def test_json_list_and_fail_on_unstable(folder):
    good = folder[:3]
    r = _run(*map(str, good), "--json", "--fail-on", "unstable")
    data = json.loads(r.stdout)
    assert [d["file"] for d in data] == [str(p) for p in good]
    assert [d["verdict"] for d in data] == [_expected(p)["verdict"] for p in good]
    # the four-hinged portal is a mechanism (frame count 3m + r - 3j - c = -1), so the run fails
    assert r.returncode == 1
    stable = [p for p in good if _expected(p)["verdict"] != "unstable"]
    r2 = _run(*map(str, stable), "--fail-on", "unstable")
    assert r2.returncode == 0


def test_bad_file_in_json_batch_is_an_entry(folder):
    r = _run(str(folder[0]), str(folder[3]), "--json")
    data = json.loads(r.stdout)
    assert data[0]["verdict"] == "indeterminate"
    assert "error" in data[1] and 'field "start"' in data[1]["error"]
    assert r.returncode == 2
