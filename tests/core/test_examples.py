"""The bundled examples: each file's "expected" block, a hand count worked here from the raw
file, the JSON Schema of the format, and `kinestat check --json` on one example.

The hand count in this module reads the JSON document itself (not the engine's model):
truss form b + r - 2j (Maxwell 1864) when every member is a bar, else the frame form
3m + r - 3j - c with the n - 1 rule for full hinges (from memory, standard textbook rule).
Whatever the geometry, the count equals s - m (Calladine 1978), so it must equal the
expected block's self_stress - mechanisms.
"""
from __future__ import annotations

import json
import math
import re
import subprocess
import sys
from importlib.resources import files
from pathlib import Path

import pytest

from catalogue import rich_scheme
from kinestat.core.classify import classify
from kinestat.core.io import load, scheme_to_dict
from kinestat.examples import example_paths

PATHS = example_paths()
IDS = [p.stem for p in PATHS]
SCHEMA = json.loads(files("kinestat.core").joinpath("scheme.schema.json").read_text(encoding="utf-8"))


def _doc(path: Path) -> dict:
    return json.loads(path.read_text(encoding="utf-8"))


def test_there_are_enough_examples():
    assert len(PATHS) >= 12
    verdicts = {_doc(p)["expected"]["verdict"] for p in PATHS}
    assert verdicts == {"unstable", "determinate", "indeterminate"}


# ---------------------------------------------------------------- independent hand count
def hand_count(doc: dict) -> int:
    members = doc["members"]
    nodes = {n["id"]: n for n in doc["nodes"]}
    ends: dict[str, list[tuple[dict, str]]] = {}
    for m in members:
        ends.setdefault(m["start"], []).append((m, "start"))
        ends.setdefault(m["end"], []).append((m, "end"))
    j = len(ends)

    def released(m, end):
        return (m.get("kind", "beam") == "bar" or nodes[m[end]].get("hinge", False)
                or "moment" in m.get("releases", {}).get(end, []))

    rigid = {nid: sum(not released(m, e) for m, e in lst) for nid, lst in ends.items()}
    fixes = {"pin": ["along", "across"], "roller": ["along"], "fixed": ["along", "across", "rotation"],
             "guided": ["along", "rotation"]}
    r = 0
    for s in doc.get("supports", []):
        if s["node"] not in ends:
            continue
        words = s.get("fix", []) if s["kind"] == "custom" else fixes[s["kind"]]
        r += sum(w in ("along", "across") for w in words)
        r += "rotation" in words and rigid[s["node"]] > 0       # a rotation restraint on nothing is no reaction
    if all(m.get("kind", "beam") == "bar" for m in members):
        return len(members) + r - 2 * j                           # Maxwell 1864
    c = 0
    for nid, lst in ends.items():
        if rigid[nid] == 0:
            c += len(lst) - 1                                     # full hinge joining n ends: n - 1
        else:
            c += sum(released(m, e) for m, e in lst)             # one per released end at a rigid joint
    for m in members:
        for end in ("start", "end"):
            words = m.get("releases", {}).get(end, [])
            c += ("shear" in words) + ("axial" in words)          # one equation of condition each
    return 3 * len(members) + r - 3 * j - c


@pytest.mark.parametrize("path", PATHS, ids=IDS)
def test_example_matches_its_expected_block(path):
    doc = _doc(path)
    exp = doc["expected"]
    r = classify(load(path))
    assert (r.verdict, r.mechanisms, r.self_stress) == (exp["verdict"], exp["mechanisms"], exp["self_stress"])
    # the expected block is consistent with itself: the verdict rule of the format
    assert exp["verdict"] == ("unstable" if exp["mechanisms"] else
                              "determinate" if exp["self_stress"] == 0 else "indeterminate")
    # the hand count worked here from the file equals s - m (Calladine 1978) and the engine's count
    count = hand_count(doc)
    assert count == exp["self_stress"] - exp["mechanisms"]
    assert r.count.value == count
    if count >= 0 and r.mechanisms > 0:          # the count misleads: the cause must be explained
        assert r.explanations


@pytest.mark.parametrize("path", PATHS, ids=IDS)
def test_example_is_documented_and_readable(path):
    doc = _doc(path)
    assert doc["title"].strip()
    notes = doc["notes"]
    assert isinstance(notes, str) and len(notes) > 80 and "\n" not in notes      # one paragraph
    exp = doc["expected"]
    assert set(exp) >= {"verdict", "mechanisms", "self_stress", "source"}
    assert "count" in exp["source"] or "Gruebler" in exp["source"]
    # ids a checker can read on a drawing: short letters and digits
    for item in doc["nodes"] + doc["members"]:
        assert re.fullmatch(r"[A-Za-z][A-Za-z0-9]{0,3}", item["id"]), item["id"]


def test_check_json_on_an_example():
    path = next(p for p in PATHS if p.stem == "glasshouse_arch")
    script = Path(sys.executable).with_name("kinestat")
    cmd = [str(script)] if script.exists() else [sys.executable, "-m", "kinestat.app"]
    proc = subprocess.run([*cmd, "check", str(path), "--json"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)
    exp = _doc(path)["expected"]
    assert (out["verdict"], out["mechanisms"], out["self_stress"]) == (exp["verdict"], exp["mechanisms"], exp["self_stress"])
    assert set(out["internal"]) >= {"mechanisms", "self_stress"}
    assert set(out["count"]) >= {"value", "terms", "formula"}
    assert set(out["count"]["terms"]) >= {"joints", "members", "reactions", "releases"}
    assert out["count"]["terms"] == {"joints": 3, "members": 2, "reactions": 4, "releases": 1}
    assert isinstance(out["warnings"], list)


# ---------------------------------------------------------------- JSON Schema (draft 2020-12 subset)
class SchemaError(AssertionError):
    pass


_ANNOTATIONS = {"$schema", "$id", "title", "description", "default", "$comment", "examples", "$defs"}
_TYPES = {"object": dict, "array": list, "string": str, "boolean": bool, "null": type(None)}


def _is_type(value, name: str) -> bool:
    if name == "integer":
        return isinstance(value, int) and not isinstance(value, bool) or (
            isinstance(value, float) and value.is_integer())
    if name == "number":
        return isinstance(value, (int, float)) and not isinstance(value, bool)
    return isinstance(value, _TYPES[name])


def _resolve(root: dict, ref: str) -> dict:
    assert ref.startswith("#/"), ref
    node = root
    for part in ref[2:].split("/"):
        node = node[part]
    return node


def validate(value, schema: dict, root: dict | None = None, where: str = "$") -> None:
    """A small validator for the keywords the scheme schema uses; an unknown keyword is an
    error, so the schema cannot silently rely on something this does not check."""
    root = root if root is not None else schema
    for key, arg in schema.items():
        if key in _ANNOTATIONS or key in ("then", "else"):
            continue
        if key == "$ref":
            validate(value, _resolve(root, arg), root, where)
        elif key == "type":
            names = arg if isinstance(arg, list) else [arg]
            if not any(_is_type(value, n) for n in names):
                raise SchemaError(f"{where}: not of type {arg}")
        elif key == "const":
            if value != arg or isinstance(value, bool) != isinstance(arg, bool):
                raise SchemaError(f"{where}: must be {arg!r}")
        elif key == "enum":
            if not any(value == a and isinstance(value, bool) == isinstance(a, bool) for a in arg):
                raise SchemaError(f"{where}: {value!r} not one of {arg}")
        elif key == "required":
            if isinstance(value, dict):
                missing = [k for k in arg if k not in value]
                if missing:
                    raise SchemaError(f"{where}: missing {missing}")
        elif key == "properties":
            if isinstance(value, dict):
                for k, sub in arg.items():
                    if k in value:
                        validate(value[k], sub, root, f"{where}.{k}")
        elif key == "additionalProperties":
            if isinstance(value, dict) and arg is False:
                extra = set(value) - set(schema.get("properties", {}))
                if extra:
                    raise SchemaError(f"{where}: unknown fields {sorted(extra)}")
        elif key == "items":
            if isinstance(value, list):
                for k, item in enumerate(value):
                    validate(item, arg, root, f"{where}[{k}]")
        elif key == "minItems":
            if isinstance(value, list) and len(value) < arg:
                raise SchemaError(f"{where}: fewer than {arg} items")
        elif key == "maxItems":
            if isinstance(value, list) and len(value) > arg:
                raise SchemaError(f"{where}: more than {arg} items")
        elif key == "uniqueItems":
            if isinstance(value, list) and arg and len({json.dumps(v, sort_keys=True) for v in value}) != len(value):
                raise SchemaError(f"{where}: repeated items")
        elif key == "minLength":
            if isinstance(value, str) and len(value) < arg:
                raise SchemaError(f"{where}: shorter than {arg}")
        elif key == "pattern":
            if isinstance(value, str) and not re.search(arg, value):
                raise SchemaError(f"{where}: does not match {arg}")
        elif key in ("minimum", "maximum", "exclusiveMinimum"):
            if _is_type(value, "number"):
                bad = {"minimum": value < arg, "maximum": value > arg, "exclusiveMinimum": value <= arg}[key]
                if bad:
                    raise SchemaError(f"{where}: {key} {arg}")
        elif key == "allOf":
            for sub in arg:
                validate(value, sub, root, where)
        elif key == "not":
            try:
                validate(value, arg, root, where)
            except SchemaError:
                continue
            raise SchemaError(f"{where}: matches a forbidden form")
        elif key == "if":
            try:
                validate(value, arg, root, where)
                branch = schema.get("then")
            except SchemaError:
                branch = schema.get("else")
            if branch is not None:
                validate(value, branch, root, where)
        else:
            raise AssertionError(f"validator does not know keyword {key!r} (at {where})")


def test_schema_declares_draft_2020_12():
    assert SCHEMA["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert SCHEMA["properties"]["format"] == {"const": "kinestat-scheme"}


@pytest.mark.parametrize("path", PATHS, ids=IDS)
def test_example_validates_against_the_schema(path):
    validate(_doc(path), SCHEMA)


def test_saved_documents_validate_against_the_schema(tmp_path):
    validate(scheme_to_dict(rich_scheme()), SCHEMA)
    for path in PATHS:
        validate(scheme_to_dict(load(path)), SCHEMA)


def _example() -> dict:
    return _doc(next(p for p in PATHS if p.stem == "walkway_shear_release"))


@pytest.mark.parametrize("change", [
    lambda d: d.update(format="other"),
    lambda d: d.update(version=2),
    lambda d: d.pop("nodes"),
    lambda d: d.update(colour="red"),
    lambda d: d["nodes"][0].update(x="0"),
    lambda d: d["nodes"][0].pop("y"),
    lambda d: d["nodes"][0].update(hinge="yes"),
    lambda d: d["members"][0].update(kind="cable"),
    lambda d: d["members"][0].update(releases={"start": ["hinge"]}),
    lambda d: d["members"][0].update(releases={"start": ["moment", "moment"]}),
    lambda d: d["members"][0].update(kind="bar", releases={"start": ["moment"]}),
    lambda d: d["members"][0].update(kind="bar", rise=0.5),
    lambda d: d["members"][0].update(stiffness={"axial": 0}),
    lambda d: d["supports"][0].update(kind="spring"),
    lambda d: d["supports"][0].update(kind="custom"),
    lambda d: d["supports"][0].update(fix=["along"]),
    lambda d: d["supports"][0].update(kind="custom", fix=["twist"]),
    lambda d: d.update(underlay={"scale": 1.0}),
    lambda d: d.update(expected={"verdict": "wobbly"}),
], ids=["format", "version", "nodes", "unknown-field", "x-string", "y-missing", "hinge-string", "kind",
        "release-word", "release-repeated", "bar-release", "bar-rise", "stiffness", "support-kind",
        "custom-no-fix", "fix-on-pin", "fix-word", "underlay-image", "expected-verdict"])
def test_schema_rejects_what_the_loader_rejects(change):
    from kinestat.core.io import SchemeError, loads

    d = _example()
    validate(d, SCHEMA)
    change(d)
    with pytest.raises(SchemaError):
        validate(d, SCHEMA)
    if d.get("expected", {}).get("verdict") != "wobbly":     # the loader keeps "expected" verbatim
        with pytest.raises(SchemeError):
            loads(json.dumps(d))


def test_schema_defaults_match_the_loader():
    # documented defaults (docs/format.md) are the loader's
    from kinestat.core.io import loads

    d = {"format": "kinestat-scheme", "version": 1, "nodes": [{"id": "A", "x": 0, "y": 0}, {"id": "B", "x": 1, "y": 0}],
         "members": [{"id": "c1", "start": "A", "end": "B"}], "supports": [{"node": "A", "kind": "roller"}]}
    validate(d, SCHEMA)
    s = loads(json.dumps(d))
    defs = SCHEMA["$defs"]
    assert s.members["c1"].kind == defs["member"]["properties"]["kind"]["default"]
    assert s.members["c1"].rise == defs["member"]["properties"]["rise"]["default"]
    assert s.supports["A"].angle == defs["support"]["properties"]["angle"]["default"]
    assert s.nodes["A"].hinge is defs["node"]["properties"]["hinge"]["default"]
    assert s.units == SCHEMA["properties"]["units"]["default"]
    assert math.isclose(s.members["c1"].axial_stiffness, defs["member"]["properties"]["stiffness"]["properties"]["axial"]["default"])
