"""The scheme file: every bad input gets a SchemeError naming the item and the field; load /
save round trip; atomic save; the command line on bad files; `kinestat check` without Qt.

Expected messages follow the format's contract (each error names the item, e.g. member "c1",
and the field, e.g. "start"); common practice for input validation.
"""
from __future__ import annotations

import copy
import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from catalogue import build, rich_scheme
from kinestat.core import io as kio
from kinestat.core.io import SchemeError, load, loads, save


def good() -> dict:
    return {"format": "kinestat-scheme", "version": 1, "title": "portal", "units": "m",
            "nodes": [{"id": "A", "x": 0.0, "y": 0.0}, {"id": "B", "x": 0.0, "y": 4.0, "hinge": True},
                      {"id": "C", "x": 5.0, "y": 4.0}, {"id": "D", "x": 5.0, "y": 0.0}],
            "members": [{"id": "c1", "start": "A", "end": "B", "kind": "beam",
                         "releases": {"start": [], "end": ["moment"]}, "rise": 0.0},
                        {"id": "c2", "start": "B", "end": "C", "kind": "beam"},
                        {"id": "b1", "start": "C", "end": "D", "kind": "bar"}],
            "supports": [{"node": "A", "kind": "pin"}, {"node": "D", "kind": "roller", "angle": 90},
                         {"node": "C", "kind": "custom", "angle": 30, "fix": ["along", "rotation"]}]}


def test_the_good_document_loads():
    s = loads(json.dumps(good()))
    assert list(s.nodes) == ["A", "B", "C", "D"]
    assert s.nodes["B"].hinge and not s.nodes["A"].hinge
    assert s.members["c1"].releases_end == frozenset({"moment"})
    assert s.members["b1"].kind == "bar"
    assert s.supports["C"].fixes == ("along", "rotation") and s.supports["C"].angle == 30
    assert s.supports["A"].angle == 90            # default angle (format: 90)


def _mutate(fn):
    d = good()
    fn(d)
    return d


def _set(path, value):
    def f(d):
        obj = d
        for k in path[:-1]:
            obj = obj[k]
        obj[path[-1]] = value
    return f


def _delete(path):
    def f(d):
        obj = d
        for k in path[:-1]:
            obj = obj[k]
        del obj[path[-1]]
    return f


# (case id, mutation, words the message must contain: the item and the field)
BAD = [
    ("wrong format", _set(["format"], "other-tool"), ["file", '"format"']),
    ("format missing", _delete(["format"]), ["file", '"format"']),
    ("newer version", _set(["version"], 2), ["file", '"version"', "newer"]),
    ("version not a number", _set(["version"], "1"), ["file", '"version"']),
    ("nodes missing", _delete(["nodes"]), ["file", '"nodes"', "missing"]),
    ("members missing", _delete(["members"]), ["file", '"members"', "missing"]),
    ("nodes not a list", _set(["nodes"], {"A": [0, 0]}), ["file", '"nodes"']),
    ("supports not a list", _set(["supports"], {"node": "A"}), ["file", '"supports"']),
    ("duplicate node id", _set(["nodes", 1, "id"], "A"), ['node "A"', '"id"', "duplicate"]),
    ("duplicate member id", _set(["members", 1, "id"], "c1"), ['member "c1"', '"id"', "duplicate"]),
    ("member id used by a node", _set(["members", 1, "id"], "A"), ['member "A"', '"id"']),
    ("node id missing", _delete(["nodes", 2, "id"]), ["nodes[2]", '"id"']),
    ("unknown start node", _set(["members", 0, "start"], "Z"), ['member "c1"', '"start"', '"Z"']),
    ("unknown end node", _set(["members", 2, "end"], "Q"), ['member "b1"', '"end"', '"Q"']),
    ("member end missing", _delete(["members", 1, "end"]), ['member "c2"', '"end"', "missing"]),
    ("ends are one node", _set(["members", 1, "end"], "B"), ['member "c2"', '"start"', '"end"', '"B"']),
    ("ends coincide", _set(["nodes", 2], {"id": "C", "x": 0.0, "y": 4.0}), ['member "c2"', "coincide"]),
    ("x not a number", _set(["nodes", 0, "x"], "zero"), ['node "A"', '"x"', "number"]),
    ("y missing", _delete(["nodes", 3, "y"]), ['node "D"', '"y"', "missing"]),
    ("y is a boolean", _set(["nodes", 3, "y"], True), ['node "D"', '"y"', "number"]),
    ("x is null", _set(["nodes", 1, "x"], None), ['node "B"', '"x"']),
    ("hinge not a boolean", _set(["nodes", 1, "hinge"], "yes"), ['node "B"', '"hinge"']),
    ("unknown member kind", _set(["members", 1, "kind"], "cable"), ['member "c2"', '"kind"', '"cable"']),
    ("releases on a bar", _set(["members", 2, "releases"], {"start": ["moment"]}), ['member "b1"', '"releases"', "bar"]),
    ("unknown release word", _set(["members", 0, "releases"], {"start": ["hinge"]}),
     ['member "c1"', "releases.start", '"hinge"']),
    ("unknown release end", _set(["members", 0, "releases"], {"middle": ["moment"]}), ['member "c1"', '"releases"', '"middle"']),
    ("releases not a list", _set(["members", 0, "releases"], {"end": "moment"}), ['member "c1"', "releases.end"]),
    ("rise not a number", _set(["members", 1, "rise"], "high"), ['member "c2"', '"rise"']),
    ("rise beyond a half circle", _set(["members", 1, "rise"], 9.0), ['member "c2"', '"rise"']),
    ("unknown support kind", _set(["supports", 0, "kind"], "spring"), ['node "A"', '"kind"', '"spring"']),
    ("support kind missing", _delete(["supports", 0, "kind"]), ['node "A"', '"kind"']),
    ("unknown fix word", _set(["supports", 2, "fix"], ["along", "twist"]), ['node "C"', '"fix"', '"twist"']),
    ("custom support without fix", _delete(["supports", 2, "fix"]), ['node "C"', '"fix"', "missing"]),
    ("fix on a pin", _set(["supports", 0, "fix"], ["along"]), ['node "A"', '"fix"']),
    ("angle not a number", _set(["supports", 1, "angle"], "up"), ['node "D"', '"angle"']),
    ("support on unknown node", _set(["supports", 1, "node"], "X"), ["supports[1]", '"node"', '"X"']),
    ("two supports on one node", _set(["supports", 1, "node"], "A"), ['node "A"', '"node"', "already"]),
    ("support node missing", _delete(["supports", 0, "node"]), ["supports[0]", '"node"', "missing"]),
    ("unknown top-level field", _set(["colour"], "red"), ["file", '"colour"']),
    ("unknown node field", _set(["nodes", 0, "z"], 1.0), ['node "A"', '"z"']),
    ("unknown member field", _set(["members", 0, "section"], "UB"), ['member "c1"', '"section"']),
    ("stiffness not positive", _set(["members", 0, "stiffness"], {"axial": 0}), ['member "c1"', "stiffness.axial"]),
    ("unknown stiffness key", _set(["members", 0, "stiffness"], {"shear": 1}), ['member "c1"', '"stiffness"', '"shear"']),
    ("node not an object", _set(["nodes", 0], ["A", 0, 0]), ["nodes[0]"]),
    ("title not a string", _set(["title"], 7), ["file", '"title"']),
    ("underlay without image", _set(["underlay"], {"scale": 0.01}), ["underlay", '"image"']),
]


@pytest.mark.parametrize("case,mutate,words", BAD, ids=[b[0] for b in BAD])
def test_bad_input_names_the_item_and_the_field(case, mutate, words):
    doc = _mutate(mutate)
    with pytest.raises(SchemeError) as exc:
        loads(json.dumps(doc))
    msg = str(exc.value)
    for w in words:
        assert w in msg, (case, msg)
    assert "\n" not in msg


@pytest.mark.parametrize("token,field", [("NaN", "x"), ("Infinity", "y"), ("-Infinity", "x"), ("1e999", "y")])
def test_non_finite_coordinates(token, field):
    # JSON text as other tools write it: NaN / Infinity tokens, or an overflowing literal
    text = json.dumps(good()).replace(f'"{field}": 4.0', f'"{field}": {token}', 1) if field == "y" else \
        json.dumps(good()).replace('"x": 5.0', f'"x": {token}', 1)
    with pytest.raises(SchemeError) as exc:
        loads(text)
    msg = str(exc.value)
    assert f'"{field}"' in msg and "finite" in msg
    assert 'node "B"' in msg or 'node "C"' in msg


@pytest.mark.parametrize("text", ["", "{", "nodes: []", "[1, 2", '{"format": "kinestat-scheme",}'])
def test_not_json(text):
    with pytest.raises(SchemeError) as exc:
        loads(text)
    assert "not valid JSON" in str(exc.value) and "line" in str(exc.value)


@pytest.mark.parametrize("doc", [[], "scheme", 3, None])
def test_document_not_an_object(doc):
    with pytest.raises(SchemeError) as exc:
        loads(json.dumps(doc))
    assert "file" in str(exc.value)


def test_unreadable_and_binary_files(tmp_path):
    with pytest.raises(SchemeError) as exc:
        load(tmp_path / "missing.json")
    assert "missing.json" in str(exc.value)
    p = tmp_path / "picture.json"
    p.write_bytes(b"\x89PNG\r\n\x1a\n\xff\xfe\x00")
    with pytest.raises(SchemeError) as exc:
        load(p)
    assert "picture.json" in str(exc.value)


def test_nothing_is_half_loaded():
    # the error is in the last support: nothing is returned, and the input document is untouched
    doc = _mutate(_set(["supports", 2, "fix"], ["twist"]))
    before = copy.deepcopy(doc)
    with pytest.raises(SchemeError):
        kio.scheme_from_dict(doc)
    assert doc == before


def test_older_files_keep_loading_and_version_is_kept():
    s = loads(json.dumps(good()))
    out = kio.scheme_to_dict(s)
    assert out["format"] == "kinestat-scheme" and out["version"] == 1


# ---------------------------------------------------------------- round trip and atomic save
def test_round_trip(tmp_path):
    s = rich_scheme()
    p = tmp_path / "s.json"
    save(s, p)
    back = load(p)
    assert back == s
    assert kio.dumps(back) == p.read_text(encoding="utf-8")
    # and through the catalogue builder (default fields)
    t = build({"A": (0, 0), "B": (4, 0)}, [("c1", "A", "B", "beam")], [("A", "fixed")])
    assert loads(kio.dumps(t)) == t


def test_save_replaces_atomically_and_leaves_no_temporary_files(tmp_path):
    p = tmp_path / "s.json"
    save(rich_scheme(), p)
    save(rich_scheme().retitled("second"), p)
    assert load(p).title == "second"
    assert sorted(os.listdir(tmp_path)) == ["s.json"]


def test_a_failing_write_leaves_the_old_file_intact(tmp_path, monkeypatch):
    p = tmp_path / "s.json"
    save(rich_scheme(), p)
    before = p.read_bytes()

    def broken_fsync(fd):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(kio.os, "fsync", broken_fsync)
    with pytest.raises(OSError):
        save(rich_scheme().retitled("never written"), p)
    assert p.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["s.json"]


def test_a_failing_rename_leaves_the_old_file_intact(tmp_path, monkeypatch):
    p = tmp_path / "s.json"
    save(rich_scheme(), p)
    before = p.read_bytes()

    def broken_replace(a, b):
        raise OSError(13, "Permission denied")

    monkeypatch.setattr(kio.os, "replace", broken_replace)
    with pytest.raises(OSError):
        save(rich_scheme().retitled("never written"), p)
    assert p.read_bytes() == before
    assert sorted(os.listdir(tmp_path)) == ["s.json"]


# ---------------------------------------------------------------- command line
def _cli() -> list[str]:
    script = Path(sys.executable).with_name("kinestat")
    if script.exists():
        return [str(script)]
    found = shutil.which("kinestat")
    return [found] if found else [sys.executable, "-m", "kinestat.app"]


def _run(*args, cwd=None):
    return subprocess.run([*_cli(), *args], capture_output=True, text=True, timeout=120, cwd=cwd)


BAD_FILES = [
    ("not_json.json", "{nodes: ]"),
    ("newer.json", json.dumps({**good(), "version": 9})),
    ("dangling.json", json.dumps(_mutate(_set(["members", 0, "start"], "Z")))),
    ("nan.json", json.dumps(good()).replace('"x": 5.0', '"x": NaN', 1)),
]


@pytest.mark.parametrize("name,text", BAD_FILES, ids=[b[0] for b in BAD_FILES])
def test_cli_bad_file_exits_nonzero_with_one_line(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    proc = _run("check", str(p))
    assert proc.returncode != 0
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, proc.stderr
    assert "Traceback" not in proc.stderr
    assert name in lines[0]
    assert proc.stdout == ""


def test_cli_missing_file(tmp_path):
    proc = _run("check", str(tmp_path / "nowhere.json"))
    assert proc.returncode != 0 and "Traceback" not in proc.stderr
    assert len([ln for ln in proc.stderr.splitlines() if ln.strip()]) == 1


def test_cli_check_json_on_a_good_file(tmp_path):
    p = tmp_path / "portal.json"
    p.write_text(json.dumps(good()), encoding="utf-8")
    proc = _run("check", str(p), "--json")
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    for key in ("verdict", "mechanisms", "self_stress", "internal", "count", "warnings"):
        assert key in out
    assert out["count"]["value"] == out["self_stress"] - out["mechanisms"]   # Calladine 1978


def test_check_does_not_import_qt(tmp_path):
    p = tmp_path / "portal.json"
    p.write_text(json.dumps(good()), encoding="utf-8")
    code = ("import sys\n"
            "from kinestat.app.cli import main\n"
            f"rc = main(['check', {str(p)!r}, '--json'])\n"
            "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('PySide6', 'shiboken6'))\n"
            "print('QT:' + ','.join(bad), file=sys.stderr)\n"
            "raise SystemExit(rc)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert "QT:\n" in proc.stderr or proc.stderr.rstrip().endswith("QT:")
    assert json.loads(proc.stdout)["verdict"] in ("unstable", "determinate", "indeterminate")
