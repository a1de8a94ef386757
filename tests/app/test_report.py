"""The PDF check report, read back with poppler's pdftotext and pdfinfo (outside tools).

For every bundled example and a few worked classics the report's text must hold the same
verdict, count and ids as ``kinestat check --json`` (``check_json``), the caution on every
page and "page k of n" numbering that matches the page count poppler reads.
"""
from __future__ import annotations

import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import unicodedata
from pathlib import Path

import pytest

from catalogue import classic, linkage

from kinestat.core.io import load, save, scheme_to_dict
from kinestat.core.report_data import check_json
from kinestat.examples import example_paths

needs_poppler = pytest.mark.skipif(shutil.which("pdftotext") is None or shutil.which("pdfinfo") is None,
                                   reason="poppler-utils (pdftotext, pdfinfo) not installed: "
                                          "apt-get install poppler-utils")

CAUTION = ("Concept-stage check only, not structural design: local codes and a licensed "
           "engineer govern.")


def norm(text: str) -> str:
    """Compatibility-normalised text with runs of white space as one space."""
    return re.sub(r"\s+", " ", unicodedata.normalize("NFKC", text)).strip()


def loose(text: str) -> str:
    """For wrapped prose: pdftotext joins a word hyphenated at a line end ("self-" + "stress"
    gives "selfstress"), so compare with hyphens and the spaces after them dropped."""
    return re.sub(r"-\s*", "", norm(text))


def pdf_pages(path: Path) -> list[str]:
    out = subprocess.run(["pdftotext", "-enc", "UTF-8", str(path), "-"], check=True,
                         capture_output=True).stdout.decode("utf-8")
    pages = out.split("\f")
    if pages and not pages[-1].strip():
        pages = pages[:-1]
    return [norm(p) for p in pages]


def pdf_info(path: Path) -> dict[str, str]:
    out = subprocess.run(["pdfinfo", str(path)], check=True, capture_output=True, text=True).stdout
    return {k.strip(): v.strip() for k, _, v in (line.partition(":") for line in out.splitlines())}


def words(text: str) -> set[str]:
    return set(re.findall(r"[^\s,;:()\[\]]+", text))


def write(qapp, scheme, path: Path, name: str | None = None):
    from kinestat.app.report import write_report

    return write_report(scheme, path, name)


def report_cases():
    cases = [pytest.param(p, id=p.stem) for p in example_paths()]
    return cases


def check_report_against_json(scheme, pdf: Path, info) -> tuple[list[str], str]:
    """The assertions every report must pass; returns the page texts and the whole text."""
    ck = check_json(scheme)
    pages = pdf_pages(pdf)
    text = " ".join(pages)
    n = int(pdf_info(pdf)["Pages"])
    assert n == len(pages) == info.pages
    for k, page in enumerate(pages, start=1):
        # the concept-stage caution on every page (project safety rule)
        assert norm(CAUTION) in page, f"page {k} lacks the caution"
        assert f"page {k} of {n}" in page
        others = {int(a) for a, b in re.findall(r"page (\d+) of (\d+)", page) if int(b) == n}
        assert others == {k}
    # the verdict in words and the rank result, as kinestat check --json says
    assert norm(ck["summary"]) in text
    assert f"m = {ck['mechanisms']} mechanism(s), s = {ck['self_stress']} state(s) of self-stress" in text
    motion = ck.get("motion")
    if motion and motion != "none":
        assert f"Motion: {motion}" in text
    # the hand count term by term
    cnt = ck["count"]
    assert norm(cnt["formula"]) in text
    t = cnt["terms"]
    # term by term beside the rank result: the two tables share lines in layout mode
    lay = norm(subprocess.run(["pdftotext", "-layout", "-enc", "UTF-8", str(pdf), "-"], check=True,
                              capture_output=True).stdout.decode("utf-8"))
    bars = cnt["form"] == "truss"
    assert f"j joints {t['joints']}" in lay
    assert (f"m members (bars) {t['members']}" if bars else f"m members {t['members']}") in lay
    assert f"r reaction components {t['reactions']}" in lay
    if not bars:
        assert f"c equations of condition (releases) {t['releases']}" in lay
    assert f"D hand count {cnt['value']}" in lay
    rk = ck["rank"]
    assert f"rank {rk['rank']}" in lay
    assert f"m mechanisms {ck['mechanisms']}" in lay and f"s states of self-stress {ck['self_stress']}" in lay
    assert re.search(rf"s ?- ?m {ck['self_stress'] - ck['mechanisms']}\b", lay)
    if cnt.get("closed_loop"):
        assert norm(cnt["closed_loop"]["formula"]) in text
    for d in cnt.get("release_detail", []):
        assert loose(d["what"]) in loose(text)
    # explanations and warnings verbatim
    for e in ck["explanations"]:
        assert loose(e) in loose(text)
    for w in ck["warnings"]:
        assert loose(w) in loose(text)
    for key in ("critical",):
        for mid in ck.get(key) or []:
            assert mid in words(text)
    # redundancy per member: each share beside its member (layout keeps a table row on a line);
    # R is a projector, so the shares add up to its rank s (von Scheven, Ramm & Bischoff 2021)
    red = ck.get("redundancy")
    if red and ck["self_stress"]:
        for mid, v in red["members"].items():
            kind = scheme.members[mid].kind
            assert re.search(rf"\b{re.escape(mid)} {kind} {float(v):.3f}\b", lay), mid
        assert abs(sum(red["members"].values()) - ck["self_stress"]) < 1e-6
        assert f"Sum over the members: {ck['self_stress']} (= s)" in text
    crit = ck.get("critical")
    if crit and len(crit) < len(scheme.members):
        assert f"Critical members ({len(crit)} of {len(scheme.members)}): {', '.join(crit)}." in text
    elif crit:
        assert f"Every member is critical ({len(crit)} of {len(crit)})" in text
    # the primary structure has exactly s releases, the redundants X1..Xs of the force method
    if ck["verdict"] == "indeterminate":
        from kinestat.core.primary import primary_structure

        ps = primary_structure(scheme).primary
        assert ps is not None and len(ps.releases) == ck["self_stress"]
        for k, rel in enumerate(ps.releases, start=1):
            assert f"X{k}" in words(text) and loose(rel.description) in loose(text)
        assert f"X{len(ps.releases) + 1}" not in words(text)
    if ck["verdict"] == "unstable":
        from kinestat.core.remedies import remedies

        res = remedies(scheme)
        for rem in res.remedies[:10]:
            assert loose(rem.description) in loose(text)
        if res.smallest_set is not None:
            for cd in res.smallest_set.changes:
                assert loose(cd.description) in loose(text)
    # every node and member id, and the counts of each, as in the scheme
    ws = words(text)
    assert set(scheme.nodes) <= ws
    assert set(scheme.members) <= ws
    assert t["members"] == len(scheme.members)
    return pages, text


def canonical_hash(scheme) -> str:
    """SHA-256 (FIPS 180-4) of the scheme dict with sorted keys and items sorted by id."""
    d = scheme_to_dict(scheme)
    d["nodes"].sort(key=lambda n: n["id"])
    d["members"].sort(key=lambda m: m["id"])
    d["supports"].sort(key=lambda s: s["node"])
    blob = json.dumps(d, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode()
    return hashlib.sha256(blob).hexdigest()[:12]


@needs_poppler
@pytest.mark.parametrize("path", report_cases())
def test_example_report_says_what_check_says(qapp, tmp_path, path):
    scheme = load(path)
    pdf = tmp_path / f"{path.stem}.pdf"
    info = write(qapp, scheme, pdf, path.name)
    pages, text = check_report_against_json(scheme, pdf, info)
    # the example's own expected block (each names its published or hand-count source)
    exp = scheme.extra.get("expected", {})
    if exp:
        assert info.verdict == exp["verdict"]
        assert f"s = {exp['self_stress']} state(s)" in text and f"m = {exp['mechanisms']} mechanism(s)" in text
    assert path.name in pages[0]
    assert canonical_hash(scheme) in pages[0] and info.hash == canonical_hash(scheme)
    # ISO 216: A4 is 210 mm x 297 mm = 595.28 pt x 841.89 pt
    size = pdf_info(pdf)["Page size"]
    w, h = (float(x) for x in re.findall(r"[\d.]+", size)[:2])
    assert abs(w - 595.28) < 1.0 and abs(h - 841.89) < 1.0


# worked classics (tests/catalogue.py; expected values from the counting rules named beside them)
CLASSIC_CASES = {
    # Maxwell's rule: 4 bars + 3 reactions - 2 x 4 joints = -1: one mechanism (an unbraced square)
    "T4": ("unstable", "Unstable — 1 mechanism", "m + r - 2j = 4 + 3 - 2×4 = -1"),
    # Maxwell's rule: 13 + 3 - 2 x 8 = 0 for the braced three-panel truss (determinate)
    "T12": ("determinate", "Stable — statically determinate", "m + r - 2j = 13 + 3 - 2×8 = 0"),
    # same count 0, but one panel doubly braced and one empty: m = s = 1 (count misleads)
    "T13": ("unstable", "Unstable — 1 mechanism", "m + r - 2j = 13 + 3 - 2×8 = 0"),
    # three-hinged portal: 3 x 4 + 4 - 3 x 5 - 1 = 0 (frame count with one equation of condition)
    "F5": ("determinate", "Stable — statically determinate", "3m + r - 3j - c = 3×4 + 4 - 3×5 - 1 = 0"),
}


@needs_poppler
@pytest.mark.parametrize("name", sorted(CLASSIC_CASES))
def test_classic_report(qapp, tmp_path, name):
    scheme = classic(name)
    verdict, summary, formula = CLASSIC_CASES[name]
    pdf = tmp_path / f"{name}.pdf"
    info = write(qapp, scheme, pdf)
    pages, text = check_report_against_json(scheme, pdf, info)
    assert info.verdict == verdict
    assert norm(summary) in text and norm(formula) in text
    if name == "T13":
        assert "The hand count and the rank result differ" in text
    else:
        assert "The hand count agrees with the rank result" in text
    if verdict == "unstable":
        assert "Mechanism positions, bodies and instant centres" in text
    else:
        assert "instant centre" not in text
    assert "(not saved)" in pages[0]


@needs_poppler
def test_four_bar_instant_centres(qapp, tmp_path):
    # ground pins A(0,0), D(5,0), cranks AB to (1,2) and DC to (4,2): the coupler's instant
    # centre is where the crank lines meet (Aronhold-Kennedy theorem): y = 2x and
    # y = -2(x - 5) meet at (2.5, 5); each crank turns about its ground pin
    scheme = linkage([(0, 0), (1, 2), (4, 2), (5, 0)])
    pdf = tmp_path / "fourbar.pdf"
    info = write(qapp, scheme, pdf)
    _, text = check_report_against_json(scheme, pdf, info)
    assert "I1 at (0, 0) m" in text
    assert "I2 at (2.5, 5) m" in text
    assert "I3 at (5, 0) m" in text
    assert "finite motion" in text


def test_content_hash_ignores_order_but_not_geometry():
    from kinestat.app.report import content_hash

    s = classic("T12")
    rev = type(s)(dict(reversed(list(s.nodes.items()))), dict(reversed(list(s.members.items()))),
                  dict(reversed(list(s.supports.items()))), s.title, s.units, s.extra)
    assert content_hash(s) == content_hash(rev) == canonical_hash(s)
    moved = s.moved({"F": (3.0, 3.001)})
    assert content_hash(moved) != content_hash(s)


# ---------------------------------------------------------------------- the command
def an_example(stem: str = "yard_gantry") -> Path:
    """A bundled example by name (the first one if it is gone)."""
    paths = example_paths()
    return next((p for p in paths if p.stem == stem), paths[0])


def run_cli(*args, env_extra=None):
    env = {k: v for k, v in os.environ.items() if k not in ("DISPLAY", "WAYLAND_DISPLAY", "QT_QPA_PLATFORM")}
    env.update(env_extra or {})
    return subprocess.run([sys.executable, "-m", "kinestat.app", "report", *map(str, args)],
                          capture_output=True, text=True, env=env, timeout=120)


@needs_poppler
def test_cli_writes_report_headless(tmp_path):
    src = tmp_path / "gantry.json"
    shutil.copy(an_example(), src)
    out = tmp_path / "out" / "r.pdf"
    out.parent.mkdir()
    r = run_cli(src, "-o", out)
    assert r.returncode == 0, r.stderr
    assert out.exists() and int(pdf_info(out)["Pages"]) >= 1
    assert "gantry.json" in pdf_pages(out)[0]
    assert [p.name for p in out.parent.iterdir()] == ["r.pdf"]  # no temporary file left behind


@needs_poppler
def test_cli_default_output_and_no_extras(tmp_path):
    src = tmp_path / "gantry.json"
    shutil.copy(an_example(), src)
    r = run_cli(src, "--no-extras")
    assert r.returncode == 0, r.stderr
    pdf = tmp_path / "gantry.pdf"
    text = " ".join(pdf_pages(pdf))
    ck = check_json(load(src), extras=False)
    assert norm(ck["summary"]) in text and norm(ck["count"]["formula"]) in text
    assert "Redundancy per member" not in text and "A primary structure" not in text
    r = run_cli(src, "-o", tmp_path / "no_such_folder" / "r.pdf")
    assert r.returncode == 2 and "does not exist" in r.stderr and len(r.stderr.strip().splitlines()) == 1


def test_cli_bad_file_names_item_and_field_and_writes_nothing(tmp_path):
    data = json.loads(an_example().read_text())
    data["members"][1]["end"] = "Z"
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(data))
    out = tmp_path / "r.pdf"
    out.write_bytes(b"previous report")
    r = run_cli(bad, "-o", out)
    assert r.returncode == 2
    lines = r.stderr.strip().splitlines()
    mid = data["members"][1]["id"]
    assert len(lines) == 1 and f'member "{mid}"' in lines[0] and '"end"' in lines[0] and '"Z"' in lines[0]
    assert out.read_bytes() == b"previous report"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.json", "r.pdf"]
    r = run_cli(tmp_path / "missing.json", "-o", tmp_path / "m.pdf")
    assert r.returncode == 2 and len(r.stderr.strip().splitlines()) == 1 and "missing.json" in r.stderr
    assert not (tmp_path / "m.pdf").exists()


def test_write_failure_leaves_target_alone(qapp, tmp_path, monkeypatch):
    from kinestat.app import report

    s = classic("T12")
    target = tmp_path / "r.pdf"
    target.write_bytes(b"old")

    def boom(self, pages):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(report.Report, "paint", boom)
    with pytest.raises(OSError):
        report.write_report(s, target)
    assert target.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir()] == ["r.pdf"]


def test_saved_example_round_trip_keeps_hash(tmp_path):
    from kinestat.app.report import content_hash

    s = load(an_example())
    save(s, tmp_path / "again.json")
    assert content_hash(load(tmp_path / "again.json")) == content_hash(s)


def test_many_qt_calls_after_a_report_do_not_abort_the_interpreter(tmp_path):
    # PySide6 6.12 on CPython 3.11 drops a reference to None on every call of a method that
    # returns nothing; without app.qt_compat's reserve 200 000 such calls exhaust None's count and the
    # interpreter aborts with "none_dealloc" (CPython's own check; PEP 683 makes None immortal
    # from 3.12 on, where this passes trivially)
    code = (
        "import os, sys\n"
        "os.environ['QT_QPA_PLATFORM'] = 'offscreen'\n"
        "from PySide6.QtGui import QGuiApplication\n"
        "from PySide6.QtCore import QPointF\n"
        "app = QGuiApplication([])\n"
        "from kinestat.core.io import load\n"
        "from kinestat.app.report import write_report\n"
        f"write_report(load({str(an_example())!r}), {str(tmp_path / 'r.pdf')!r})\n"
        "p = QPointF()\n"
        "for _ in range(200000):\n"
        "    p.setX(1.0)\n"
        "print('alive')\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert r.returncode == 0 and r.stdout.strip() == "alive", r.stderr[-500:]


@needs_poppler
def test_reports_of_what_a_user_can_draw_never_fail(qapp, tmp_path):
    from kinestat.core.model import Node, Scheme

    from catalogue import build

    cases = {
        # nothing drawn yet: the report says so instead of a verdict
        "empty": Scheme(),
        # a beam with no support: 3 rigid-body mechanisms (a free body in the plane, common knowledge)
        "free": build({"A": (0, 0), "B": (4, 0)}, [("c1", "A", "B", "beam")]),
        # ids and title outside ASCII come through the PDF text unchanged
        "unicode": build({"Ä": (0, 0), "ß": (4, 0)}, [("träger", "Ä", "ß", "beam")], [("Ä", "fixed")])
        .retitled("Brücke – 桥"),
        "nodes": Scheme({"A": Node("A", 0, 0)}),
    }
    for name, s in cases.items():
        pdf = tmp_path / f"{name}.pdf"
        info = write(qapp, s, pdf)
        text = " ".join(pdf_pages(pdf))
        assert int(pdf_info(pdf)["Pages"]) == info.pages
        if not s.members:
            assert "No members to check" in text
        else:
            check_report_against_json(s, pdf, info)
    assert "Unstable — 3 mechanisms" in " ".join(pdf_pages(tmp_path / "free.pdf"))
    assert "Brücke – 桥" in " ".join(pdf_pages(tmp_path / "unicode.pdf"))


@needs_poppler
def test_curved_ribs_on_a_roller_instant_centre(qapp, tmp_path):
    from catalogue import build

    # two curved ribs hinged at C(4, 3), pinned at A(0, 0), on a roller at B(8, 0) with a vertical
    # reaction: rib AC turns about A; rib CB's centre lies on line AC through the hinge and on the
    # normal to the roller's path at B (Aronhold-Kennedy): y = 0.75 x meets x = 8 at (8, 6)
    s = build({"A": (0, 0), "C": (4, 3), "B": (8, 0)},
              [("r1", "A", "C", "beam", (), (), 1.0), ("r2", "C", "B", "beam", (), (), -1.0)],
              [("A", "pin"), ("B", "roller")], hinges=("C",))
    pdf = tmp_path / "ribs.pdf"
    info = write(qapp, s, pdf)
    _, text = check_report_against_json(s, pdf, info)
    assert "I1 at (0, 0) m" in text and "I2 at (8, 6) m" in text
