"""Underlay calibration and the "underlay" block of the scheme file."""
from __future__ import annotations

import json
import math

import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from kinestat.core.io import SchemeError, dumps, loads
from kinestat.core.model import Scheme
from kinestat.core.underlay import (
    CalibrationError,
    Underlay,
    check_underlay,
    missing_image_message,
    relative_image_path,
    resolve_image,
    rotation_from_line,
    scale_from_points,
    underlay_from_dict,
    underlay_of,
    with_underlay,
)

pixel = st.floats(-5000, 5000, allow_nan=False, allow_infinity=False)


def _dist(a, b):
    return math.hypot(b[0] - a[0], b[1] - a[1])


# --------------------------------------------------------------------- scale
def test_scale_from_two_points_matches_exact_arithmetic():
    # exact: scale = d / sqrt(du^2 + dv^2) evaluated with sympy rationals (Pythagoras)
    p, q, d = (sp.Rational(10325, 100), sp.Rational(4125, 10)), (sp.Rational(87775, 100), sp.Rational(96125, 1000)), sp.Rational(125, 10)
    exact = d / sp.sqrt((q[0] - p[0]) ** 2 + (q[1] - p[1]) ** 2)
    got = scale_from_points((float(p[0]), float(p[1])), (float(q[0]), float(q[1])), float(d))
    assert abs(got - float(exact.evalf(40))) <= 1e-9 * float(exact)


def test_scale_3_4_5_triangle():
    # a 3-4-5 right triangle (Pythagoras): picks 500 px apart, typed 10 m -> 0.02 m per pixel
    assert scale_from_points((100, 200), (400, 600), 10.0) == pytest.approx(0.02, rel=1e-12)


@settings(max_examples=200, deadline=None)
@given(pixel, pixel, pixel, pixel, st.floats(1e-2, 1e5), st.floats(-180, 180), st.floats(-100, 100),
       st.floats(-100, 100))
def test_calibrated_underlay_puts_picked_points_the_typed_distance_apart(pu, pv, qu, qv, d, rot, ox, oy):
    # a similarity multiplies every distance by the scale (plane geometry); the image sits
    # within 100 units of the scheme origin so that rounding of the coordinates stays below 1e-9 d
    if math.hypot(qu - pu, qv - pv) < 1.0:
        return
    u = Underlay("a.png", rotation_deg=rot, origin=(ox, oy)).with_scale_from_points((pu, pv), (qu, qv), d)
    a, b = u.to_scheme(pu, pv), u.to_scheme(qu, qv)
    assert abs(_dist(a, b) - d) <= 1e-9 * d
    assert abs(u.scale - d / math.hypot(qu - pu, qv - pv)) <= 1e-9 * u.scale


def test_scale_keeps_the_first_picked_point_in_place():
    u0 = Underlay("a.png", scale=0.5, origin=(3.0, -2.0), rotation_deg=12.0)
    before = u0.to_scheme(40, 70)
    u1 = u0.with_scale_from_points((40, 70), (240, 70), 4.0)
    after = u1.to_scheme(40, 70)
    assert _dist(before, after) < 1e-9
    assert u1.scale == pytest.approx(0.02, rel=1e-12)
    assert u1.rotation_deg == 12.0


@pytest.mark.parametrize("p,q,d,field", [
    ((0, 0), (0, 0), 1.0, "coincide"),
    ((0, 0), (10, 0), 0.0, "distance"),
    ((0, 0), (10, 0), -2.0, "distance"),
    ((0, 0), (10, 0), float("nan"), "distance"),
    ((0, float("inf")), (10, 0), 1.0, "first picked point"),
    ((0, 0), "x", 1.0, "second picked point"),
])
def test_bad_scale_picks_are_rejected_with_a_clear_message(p, q, d, field):
    with pytest.raises(CalibrationError, match=field):
        scale_from_points(p, q, d)


# --------------------------------------------------------------------- rotation
@pytest.mark.parametrize("p,q,expected", [
    # image rows run down: a pixel line going up-right at 45 degrees needs -45 (from memory: atan2)
    ((0, 0), (100, -100), -45.0),
    ((0, 0), (100, 100), 45.0),
    ((0, 0), (-100, 0), 0.0),  # already horizontal, picked right-to-left
    ((0, 0), (0, 50), 90.0),  # vertical: a quarter turn (either way; (-90, 90] keeps +90)
    ((10, 10), (10 + math.sqrt(3), 9), -30.0),  # tan 30 = 1/sqrt 3
])
def test_rotation_from_line(p, q, expected):
    assert rotation_from_line(p, q) == pytest.approx(expected, abs=1e-12)


@settings(max_examples=200, deadline=None)
@given(pixel, pixel, pixel, pixel, st.floats(1e-3, 10), pixel, pixel)
def test_straightened_line_is_horizontal(pu, pv, qu, qv, k, ox, oy):
    if math.hypot(qu - pu, qv - pv) < 1.0:
        return
    u = Underlay("a.png", scale=k, origin=(ox, oy), rotation_deg=33.0).with_rotation_from_line((pu, pv), (qu, qv))
    a, b = u.to_scheme(pu, pv), u.to_scheme(qu, qv)
    assert abs(a[1] - b[1]) <= 1e-9 * max(1.0, _dist(a, b))
    assert abs(_dist(a, b) - k * math.hypot(qu - pu, qv - pv)) <= 1e-9 * max(1.0, _dist(a, b))
    assert -90.0 < u.rotation_deg <= 90.0


def test_rotation_keeps_the_first_picked_point_in_place():
    u0 = Underlay("a.png", scale=0.01, origin=(1.0, 2.0))
    before = u0.to_scheme(300, 400)
    u1 = u0.with_rotation_from_line((300, 400), (900, 380))
    assert _dist(before, u1.to_scheme(300, 400)) < 1e-12


# --------------------------------------------------------------------- transform
def test_transform_axes_and_origin():
    # no rotation: u to the right is +x, v down is -y; pixel (0, 0) sits at the origin
    u = Underlay("a.png", scale=0.5, origin=(10.0, 20.0))
    assert u.to_scheme(0, 0) == (10.0, 20.0)
    assert u.to_scheme(4, 0) == pytest.approx((12.0, 20.0))
    assert u.to_scheme(0, 4) == pytest.approx((10.0, 18.0))
    # a quarter turn counter-clockwise sends +u to +y
    r = Underlay("a.png", scale=1.0, rotation_deg=90.0)
    assert r.to_scheme(1, 0) == pytest.approx((0.0, 1.0), abs=1e-15)


@settings(max_examples=200, deadline=None)
@given(pixel, pixel, st.floats(1e-4, 100), st.floats(-360, 360), pixel, pixel)
def test_to_image_inverts_to_scheme(u_, v_, k, rot, ox, oy):
    u = Underlay("a.png", scale=k, origin=(ox, oy), rotation_deg=rot)
    back = u.to_image(*u.to_scheme(u_, v_))
    assert _dist(back, (u_, v_)) <= 1e-9 * max(1.0, abs(u_), abs(v_), abs(ox / k), abs(oy / k))


def test_placed_moves_a_pixel_onto_a_scheme_point():
    u = Underlay("a.png", scale=0.02, rotation_deg=-3.0).placed((512, 384), (6.0, 0.0))
    assert _dist(u.to_scheme(512, 384), (6.0, 0.0)) < 1e-12


# --------------------------------------------------------------------- the file block
GOOD = {"image": "sketches/portal.jpg", "scale": 0.0125, "origin": [-2.0, 9.5], "rotation_deg": -1.8,
        "opacity": 0.4, "locked": True, "visible": False}


def _doc(**extra):
    d = {"format": "kinestat-scheme", "version": 1, "nodes": [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 4, "y": 0}],
         "members": [{"id": "M1", "start": "A", "end": "B"}]}
    d.update(extra)
    return d


def test_block_round_trip():
    u = underlay_from_dict(GOOD)
    assert u == Underlay("sketches/portal.jpg", 0.0125, (-2.0, 9.5), -1.8, 0.4, True, False)
    assert u.to_dict() == GOOD
    s = with_underlay(loads(json.dumps(_doc())), u)
    again = loads(dumps(s))
    assert underlay_of(again) == u
    assert underlay_of(with_underlay(again, None)) is None


def test_defaults_when_only_the_image_is_given():
    assert underlay_from_dict({"image": "a.png"}) == Underlay("a.png", 1.0, (0.0, 0.0), 0.0, 0.5, False, True)


def test_files_without_underlay_load_as_before():
    s = loads(json.dumps(_doc()))
    assert "underlay" not in s.extra
    assert underlay_of(s) is None
    assert set(s.members) == {"M1"}
    check_underlay(_doc())  # no block: nothing to check


@pytest.mark.parametrize("change,field", [
    ({"image": ""}, '"image"'),
    ({"image": 3}, '"image"'),
    ({"image": "/home/x/a.png"}, '"image": "/home/x/a.png" is absolute'),
    ({"image": "C:\\sketch.png"}, "absolute"),
    ({"scale": 0}, '"scale": must be positive'),
    ({"scale": -1.5}, '"scale"'),
    ({"scale": "1"}, '"scale": must be a finite number'),
    ({"scale": True}, '"scale"'),
    ({"origin": [1]}, '"origin" must be a list'),
    ({"origin": [1, "a"]}, '"origin\\[1\\]"'),
    ({"rotation_deg": None}, '"rotation_deg"'),
    ({"opacity": 1.5}, '"opacity": must be from 0'),
    ({"opacity": -0.1}, '"opacity"'),
    ({"locked": "yes"}, '"locked" must be true or false'),
    ({"visible": 1}, '"visible" must be true or false'),
    ({"colour": "red"}, 'unknown field "colour"'),
])
def test_bad_blocks_name_the_field(change, field):
    with pytest.raises(SchemeError, match=field):
        underlay_from_dict({**GOOD, **change})


def test_block_missing_image_and_not_an_object():
    with pytest.raises(SchemeError, match='field "image" is missing'):
        underlay_from_dict({"scale": 1.0})
    with pytest.raises(SchemeError, match="underlay: must be an object"):
        check_underlay(_doc(underlay=[1, 2]))


def test_scheme_loader_rejects_a_bad_underlay_block():
    # the loader validates the underlay block: nothing is half-loaded, the message names the field
    bad = json.dumps(_doc(underlay={**GOOD, "opacity": 7}))
    with pytest.raises(SchemeError) as info:
        loads(bad)
    assert '"opacity"' in str(info.value) and "underlay" in str(info.value)


# --------------------------------------------------------------------- image file
def test_relative_path_and_missing_image(tmp_path):
    (tmp_path / "sketches").mkdir()
    img = tmp_path / "sketches" / "portal.png"
    img.write_bytes(b"\x89PNG\r\n\x1a\n")
    scheme_file = tmp_path / "portal.json"
    rel = relative_image_path(img, scheme_file)
    assert rel == "sketches/portal.png"
    u = Underlay(rel)
    assert resolve_image(scheme_file, u) == img.resolve()
    assert missing_image_message(scheme_file, u) is None
    img.unlink()
    msg = missing_image_message(scheme_file, u)
    assert msg is not None and "sketches/portal.png" in msg and "missing" in msg


def test_with_underlay_keeps_other_blocks():
    s = Scheme(extra={"notes": "kept"})
    s2 = with_underlay(s, Underlay("a.png"))
    assert s2.extra["notes"] == "kept" and s2.extra["underlay"]["image"] == "a.png"
