"""Primary structures: s releases leaving a stable, statically determinate scheme.

Sources: the force method (a primary structure is obtained by removing s redundants, e.g.
A. Kassimali, Structural Analysis, ch. 13, from memory); Pellegrino & Calladine (1986)
(m = rows - rank, s = cols - rank, so the kept forces must be a column basis of A); the
basis exchange property of a linear matroid (Oxley, from memory); column-pivoted QR
(Businger & Golub 1965).  Every check re-analyses the released scheme with classify().
"""
from __future__ import annotations

import json
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from catalogue import CLASSICS, classic, random_scheme, rigid_frame, two_bay_portal
from kinestat.core.classify import classify
from kinestat.core.io import load, save
from kinestat.core.primary import primary_structure


def _all(res):
    return ([res.primary] if res.primary else []) + list(res.alternatives)


def _check_primary(sch, ps, s):
    after = classify(ps.scheme)
    assert (after.mechanisms, after.self_stress) == (0, 0)
    assert len(ps.releases) == s
    A = classify(sch).system
    # each force-method state: the original scheme's self-stress with its release = 1
    for rel, state in zip(ps.releases, ps.states):
        kind, item, detail = rel.column
        if kind == "reaction":
            assert item in state.reactions and abs(state.reactions[item][detail]) > 0
        else:
            assert item in state.forces and abs(state.forces[item][kind]) > 0
    return after


def test_portal_fixed_feet_q1():
    # Q1 (F3, s = 3): reactions first gives a simply supported portal (a pin and a roller);
    # hinges first only hinges; keeping the supports only internal releases
    sch = classic("F3")
    res = primary_structure(sch)
    assert res.self_stress == 3
    ps = res.primary
    _check_primary(sch, ps, 3)
    assert ps.preference == "reactions first"
    assert all(r.kind == "reaction" for r in ps.releases)
    kinds = sorted(s.kind for s in ps.scheme.supports.values())
    assert kinds == ["pin", "roller"]
    hinges = primary_structure(sch, preference="hinges first").primary
    assert all(r.kind == "hinge" for r in hinges.releases)
    keep = primary_structure(sch, preference="keep supports").primary
    assert all(r.kind != "reaction" for r in keep.releases)
    assert {k: (v.kind, v.angle) for k, v in keep.scheme.supports.items()} == \
        {k: (v.kind, v.angle) for k, v in sch.supports.items()}
    for alt in _all(res):
        _check_primary(sch, alt, 3)
    assert len({alt.key() for alt in _all(res)}) == len(_all(res))      # all different


@pytest.mark.parametrize("name", [k for k in CLASSICS])
def test_classics(name):
    sch = classic(name)
    c = classify(sch)
    res = primary_structure(sch, c)
    if c.mechanisms:
        assert res.primary is None and "unstable" in res.note
    elif c.self_stress == 0:
        assert res.primary is not None and res.primary.releases == () and res.primary.scheme is sch
    else:
        assert res.primary is not None
        for ps in _all(res):
            _check_primary(sch, ps, c.self_stress)


@settings(max_examples=25, deadline=None)
@given(st.integers(0, 10 ** 6))
def test_random_indeterminate_schemes(seed):
    rng = random.Random(seed)
    for _ in range(3):
        sch = random_scheme(rng)
        c = classify(sch)
        if c.mechanisms or not c.self_stress:
            continue
        res = primary_structure(sch, c, max_alternatives=2)
        assert res.primary is not None, res.note
        for ps in _all(res):
            _check_primary(sch, ps, c.self_stress)


def test_frames_release_counts():
    # closed-loop rule: a rigid frame with fixed feet has s = 3 per closed loop (with the ground)
    for sch, s in ((two_bay_portal(), 6), (rigid_frame(2, 3), 18)):
        res = primary_structure(sch, max_alternatives=1)
        assert res.self_stress == s
        _check_primary(sch, res.primary, s)
        # the original is untouched
        assert classify(sch).self_stress == s


def test_exchange_alternatives_differ_by_one_release():
    # basis exchange: an exchange alternative keeps all but one release of the first
    res = primary_structure(classic("F3"), max_alternatives=8)
    first = res.primary.key()
    ex = [a for a in res.alternatives if a.preference.endswith("exchange")]
    assert ex
    for a in ex:
        assert len(first - a.key()) == 1 and len(a.key() - first) == 1


def test_cli_primary(tmp_path, capsys):
    from kinestat.app.cli import main

    path = tmp_path / "portal.json"
    save(classic("F3"), path)
    out_path = tmp_path / "primary.json"
    assert main(["primary", str(path), "--json", "--save", str(out_path)]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["releases"]) == 3 and out["primary"]["mechanisms"] == 0
    assert "caution" in out
    saved = load(out_path)
    assert (classify(saved).mechanisms, classify(saved).self_stress) == (0, 0)
    # unstable: no primary structure, exit 1
    save(classic("T4"), path)
    assert main(["primary", str(path), "--json"]) == 1
    assert json.loads(capsys.readouterr().out)["primary"] is None
    # bad file: one line on stderr naming the item and field, exit 2
    bad = tmp_path / "bad.json"
    bad.write_text('{"format": "kinestat-scheme", "version": 1, "nodes": [{"id": "A", "x": "1", "y": 0}], '
                   '"members": []}')
    assert main(["primary", str(bad)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and 'node "A"' in err[0] and '"x"' in err[0]


def test_units_do_not_change_the_releases():
    # the choice works on the scale-free equilibrium matrix (moments as M / Lref)
    from dataclasses import replace

    base = two_bay_portal()
    mm = replace(base.moved({n.id: (n.x * 1000, n.y * 1000) for n in base.nodes.values()}), units="mm")
    a, b = primary_structure(base), primary_structure(mm)
    assert [r.column for r in a.primary.releases] == [r.column for r in b.primary.releases]
    assert [alt.key() for alt in a.alternatives] == [alt.key() for alt in b.alternatives]
