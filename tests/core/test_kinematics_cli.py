"""``kinestat motion``: the JSON contract, the readable summary and bad input (headless)."""
from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest

from kinestat.app.cli import main

DATA = Path(__file__).parent / "data"
ENDS = {"full cycle", "dead centre", "clash", "limit"}


def _run(capsys, *argv):
    code = main(["motion", *map(str, argv)])
    out, err = capsys.readouterr()
    return code, out, err


def _json(capsys, *argv):
    code, out, err = _run(capsys, *argv, "--json")
    assert code == 0, err
    assert out.count("\n") == 1           # one JSON object on one line
    return json.loads(out)


def _check_contract(d, scheme_file):
    doc = json.loads((DATA / scheme_file).read_text())
    ids = {n["id"] for n in doc["nodes"]}
    assert d["motion"] in ("finite", "infinitesimal")
    assert d["frames"] and all(set(f["nodes"]) == ids for f in d["frames"])
    assert all(len(xy) == 2 and all(isinstance(v, float) for v in xy) for f in d["frames"] for xy in f["nodes"].values())
    assert set(d["ended"]) == {"forward", "backward"} and set(d["ended"].values()) <= ENDS
    members = {m["id"] for m in doc["members"]}
    for b in d["bodies"]:
        assert set(b["members"]) <= members
        if b["centre"] is None:
            assert len(b["direction"]) == 2 and math.hypot(*b["direction"]) == pytest.approx(1.0)
        else:
            assert len(b["centre"]) == 2
    assert "licensed engineer" in d["caution"]


def test_crank_rocker_json_returns_to_its_start(capsys):
    # Grashof 1883: crank-rocker, full turn of the crank
    d = _json(capsys, DATA / "kin_crank_rocker.json")
    _check_contract(d, "kin_crank_rocker.json")
    assert d["motion"] == "finite" and d["linearised"] is False
    assert d["ended"] == {"forward": "full cycle", "backward": "full cycle"}
    assert d["frames"][-1] == d["frames"][0] == d["frames"][d["start_frame"]]
    assert d["frames"][0]["nodes"]["B"] == pytest.approx([1.874099, 7.998559], abs=1e-6)
    # the coupler's instant centre at the drawn position (Aronhold-Kennedy; methods I1)
    coupler = next(b for b in d["bodies"] if b["members"] == ["coupler"])
    assert coupler["centre"] == pytest.approx([4.623155, 2.669180], abs=1e-5)
    assert d["residual"] < 1e-9
    a = [math.atan2(f["nodes"]["A"][1], f["nodes"]["A"][0]) for f in d["frames"]]
    turn = sum(math.remainder(a1 - a0, 2 * math.pi) for a0, a1 in zip(a, a[1:]))
    assert abs(turn) == pytest.approx(2 * math.pi, abs=1e-9)


def test_triple_rocker_json_ends_at_dead_centres(capsys):
    # non-Grashof: the input stops at +-137.8736 deg (closed form, methods K6)
    d = _json(capsys, DATA / "kin_triple_rocker.json")
    _check_contract(d, "kin_triple_rocker.json")
    assert d["ended"] == {"forward": "dead centre", "backward": "dead centre"}
    ends = sorted(math.degrees(math.atan2(f["nodes"]["A"][1], f["nodes"]["A"][0])) for f in
                  (d["frames"][0], d["frames"][-1]))
    assert ends == pytest.approx([-137.87358, 137.87358], abs=1e-4)


def test_translating_body_has_a_direction_and_no_centre(capsys):
    d = _json(capsys, DATA / "kin_parallel_rollers.json")
    _check_contract(d, "kin_parallel_rollers.json")
    (body,) = d["bodies"]
    assert body["centre"] is None
    assert [abs(v) for v in body["direction"]] == pytest.approx([1.0, 0.0])
    assert d["ended"] == {"forward": "limit", "backward": "limit"}


def test_infinitesimal_json_is_linearised_and_labelled(capsys):
    d = _json(capsys, DATA / "kin_flat_arch.json")
    _check_contract(d, "kin_flat_arch.json")
    assert d["motion"] == "infinitesimal" and d["linearised"] is True
    assert "no physical meaning" in d["note"]
    assert d["residual"] is None


def test_mode_and_steps_options(capsys):
    d1 = _json(capsys, DATA / "kin_five_bar.json", "--mode", 2, "--steps", 3)
    assert d1["mode"] == 2 and len(d1["modes"]) == 2
    assert len(d1["frames"]) <= 2 * 3 + 1
    assert d1["ended"] == {"forward": "limit", "backward": "limit"}
    d2 = _json(capsys, DATA / "kin_five_bar.json", "--combine", "1,0", "--steps", 3)
    assert d2["mode"] is None


def test_mode_out_of_range_is_refused(capsys):
    code, out, err = _run(capsys, DATA / "kin_crank_rocker.json", "--mode", 4, "--json")
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and '"--mode"' in err and "1 to 1" in err


def test_stable_scheme_reports_no_motion(capsys, tmp_path):
    doc = json.loads((DATA / "kin_crank_rocker.json").read_text())
    doc["members"].append({"id": "brace", "start": "O2", "end": "B", "kind": "bar"})
    f = tmp_path / "braced.json"
    f.write_text(json.dumps(doc))
    code, out, err = _run(capsys, f, "--json")
    assert code == 0
    d = json.loads(out)
    assert d["motion"] == "none" and d["bodies"] == [] and len(d["frames"]) == 1


def test_readable_summary(capsys):
    code, out, err = _run(capsys, DATA / "kin_portal_four_hinges.json")
    assert code == 0 and err == ""
    assert "motion finite" in out
    assert "translates along" in out and "instant centre (0, 0)" in out
    assert "licensed engineer" in out


def test_bad_file_gives_one_line_naming_item_and_field():
    # a real process: exit status and stderr as a shell sees them
    r = subprocess.run([sys.executable, "-m", "kinestat.app", "motion", str(DATA / "kin_bad_member.json"), "--json"],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 2 and r.stdout == ""
    assert r.stderr.count("\n") == 1
    assert 'member "m1"' in r.stderr and 'field "end"' in r.stderr and '"Z"' in r.stderr


def test_motion_command_does_not_import_qt():
    code = ("import sys; from kinestat.app.cli import main; "
            f"main(['motion', r'{DATA / 'kin_crank_rocker.json'}', '--json', '--steps', '2']); "
            "assert not any(m.startswith('PySide6') for m in sys.modules), 'Qt imported'")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert r.returncode == 0, r.stderr
