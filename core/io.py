"""The kinestat scheme file: JSON, ``"format": "kinestat-scheme"``, ``"version": 1``.

Loading validates everything before anything is built, so a bad file is rejected whole
with one :class:`SchemeError` whose message names the item and the field.  Saving writes
to a temporary file in the same folder and renames it over the target (``os.replace`` is
atomic on POSIX and Windows), so a crash during a save never leaves a half-written file.

The format is described in ``docs/format.md`` and by the JSON Schema shipped as
``kinestat/core/scheme.schema.json``.
"""
from __future__ import annotations

import contextlib
import json
import math
import os
import tempfile
from pathlib import Path
from typing import Any

from .model import (
    FIX_WORDS,
    MEMBER_KINDS,
    RELEASE_WORDS,
    SUPPORT_KINDS,
    Member,
    Node,
    Scheme,
    Support,
)

FORMAT_NAME = "kinestat-scheme"
FORMAT_VERSION = 1
#: optional top-level blocks kept verbatim
EXTRA_KEYS = ("notes", "expected", "underlay", "source")
_TOP_KEYS = {"format", "version", "title", "units", "nodes", "members", "supports", *EXTRA_KEYS}


class SchemeError(ValueError):
    """A scheme file or scheme dictionary that cannot be loaded; the message says where."""


def _num(value: Any, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise SchemeError(f"{where}: must be a number, got {json.dumps(value)}")
    v = float(value)
    if not math.isfinite(v):
        raise SchemeError(f"{where}: must be a finite number, got {value}")
    return v


def _str_id(value: Any, where: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise SchemeError(f"{where}: must be a non-empty string, got {json.dumps(value)}")
    return value


def _words(value: Any, allowed: tuple[str, ...], where: str) -> tuple[str, ...]:
    if not isinstance(value, list):
        raise SchemeError(f"{where}: must be a list of words, got {json.dumps(value)}")
    for w in value:
        if w not in allowed:
            raise SchemeError(f"{where}: unknown word {json.dumps(w)} (allowed: {', '.join(allowed)})")
    if len(set(value)) != len(value):
        raise SchemeError(f"{where}: a word is repeated in {json.dumps(value)}")
    return tuple(value)


def _obj(value: Any, where: str) -> dict:
    if not isinstance(value, dict):
        raise SchemeError(f"{where}: must be an object, got {json.dumps(value)[:40]}")
    return value


def scheme_from_dict(data: Any) -> Scheme:
    """Validate a parsed JSON document and build the :class:`Scheme` (all or nothing)."""
    data = _obj(data, "file")
    fmt = data.get("format")
    if fmt != FORMAT_NAME:
        raise SchemeError(f'file: field "format" must be "{FORMAT_NAME}", got {json.dumps(fmt)}')
    if "version" not in data:
        raise SchemeError('file: field "version" is missing')
    version = data["version"]
    if isinstance(version, bool) or not isinstance(version, int):
        raise SchemeError(f'file: field "version" must be an integer, got {json.dumps(version)}')
    if version > FORMAT_VERSION:
        raise SchemeError(
            f'file: field "version" is {version}, newer than this kinestat reads ({FORMAT_VERSION}); '
            "update kinestat to open it")
    if version < 1:
        raise SchemeError(f'file: field "version" must be 1 or more, got {version}')
    for key in data:
        if key not in _TOP_KEYS:
            raise SchemeError(f"file: unknown field {json.dumps(key)}")
    for section in ("nodes", "members"):
        if section not in data:
            raise SchemeError(f'file: section "{section}" is missing')
        if not isinstance(data[section], list):
            raise SchemeError(f'file: section "{section}" must be a list')
    supports_raw = data.get("supports", [])
    if not isinstance(supports_raw, list):
        raise SchemeError('file: section "supports" must be a list')
    title = data.get("title", "")
    if not isinstance(title, str):
        raise SchemeError('file: field "title" must be a string')
    units = data.get("units", "m")
    if not isinstance(units, str) or not units:
        raise SchemeError('file: field "units" must be a non-empty string such as "m" or "mm"')

    nodes: dict[str, Node] = {}
    for k, raw in enumerate(data["nodes"]):
        raw = _obj(raw, f"nodes[{k}]")
        nid = _str_id(raw.get("id"), f'nodes[{k}]: field "id"')
        where = f'node "{nid}"'
        if nid in nodes:
            raise SchemeError(f'{where}: field "id": duplicate id')
        for key in raw:
            if key not in ("id", "x", "y", "hinge"):
                raise SchemeError(f"{where}: unknown field {json.dumps(key)}")
        for key in ("x", "y"):
            if key not in raw:
                raise SchemeError(f'{where}: field "{key}" is missing')
        hinge = raw.get("hinge", False)
        if not isinstance(hinge, bool):
            raise SchemeError(f'{where}: field "hinge" must be true or false')
        nodes[nid] = Node(nid, _num(raw["x"], f'{where}: field "x"'), _num(raw["y"], f'{where}: field "y"'), hinge)

    members: dict[str, Member] = {}
    for k, raw in enumerate(data["members"]):
        raw = _obj(raw, f"members[{k}]")
        mid = _str_id(raw.get("id"), f'members[{k}]: field "id"')
        where = f'member "{mid}"'
        if mid in members:
            raise SchemeError(f'{where}: field "id": duplicate id')
        if mid in nodes:
            raise SchemeError(f'{where}: field "id": already used by a node')
        for key in raw:
            if key not in ("id", "start", "end", "kind", "releases", "rise", "stiffness"):
                raise SchemeError(f"{where}: unknown field {json.dumps(key)}")
        ends = []
        for key in ("start", "end"):
            if key not in raw:
                raise SchemeError(f'{where}: field "{key}" is missing')
            nid = _str_id(raw[key], f'{where}: field "{key}"')
            if nid not in nodes:
                raise SchemeError(f'{where}: field "{key}": unknown node "{nid}"')
            ends.append(nid)
        if ends[0] == ends[1]:
            raise SchemeError(f'{where}: fields "start" and "end": both ends are node "{ends[0]}"')
        a, b = nodes[ends[0]], nodes[ends[1]]
        if a.x == b.x and a.y == b.y:
            raise SchemeError(
                f'{where}: fields "start" and "end": nodes "{a.id}" and "{b.id}" coincide at ({a.x:g}, {a.y:g})')
        kind = raw.get("kind", "beam")
        if kind not in MEMBER_KINDS:
            raise SchemeError(f'{where}: field "kind": unknown kind {json.dumps(kind)} (allowed: beam, bar)')
        rel = raw.get("releases", {})
        rel = _obj(rel, f'{where}: field "releases"')
        for key in rel:
            if key not in ("start", "end"):
                raise SchemeError(f'{where}: field "releases": unknown end {json.dumps(key)} (allowed: start, end)')
        rs = _words(rel.get("start", []), RELEASE_WORDS, f'{where}: field "releases.start"')
        re_ = _words(rel.get("end", []), RELEASE_WORDS, f'{where}: field "releases.end"')
        if kind == "bar" and (rs or re_):
            raise SchemeError(f'{where}: field "releases": a bar is pin-ended and carries axial force only; '
                              'releases are allowed on beams only')
        rise = _num(raw.get("rise", 0.0), f'{where}: field "rise"')
        chord = math.hypot(b.x - a.x, b.y - a.y)
        if abs(rise) > chord / 2 * (1 + 1e-12):
            raise SchemeError(f'{where}: field "rise": {rise:g} exceeds half the chord ({chord / 2:g}); '
                              "a member is at most a half circle")
        if kind == "bar" and rise != 0:
            raise SchemeError(f'{where}: field "rise": a bar is straight; use a beam for a curved member')
        stiff = _obj(raw.get("stiffness", {}), f'{where}: field "stiffness"')
        for key in stiff:
            if key not in ("axial", "bending"):
                raise SchemeError(f'{where}: field "stiffness": unknown key {json.dumps(key)} (allowed: axial, bending)')
        ea = _num(stiff.get("axial", 1.0), f'{where}: field "stiffness.axial"')
        ei = stiff.get("bending")
        if ei is not None:
            ei = _num(ei, f'{where}: field "stiffness.bending"')
            if ei <= 0:
                raise SchemeError(f'{where}: field "stiffness.bending": must be positive')
        if ea <= 0:
            raise SchemeError(f'{where}: field "stiffness.axial": must be positive')
        members[mid] = Member(mid, ends[0], ends[1], kind, frozenset(rs), frozenset(re_), rise, ea, ei)

    supports: dict[str, Support] = {}
    for k, raw in enumerate(supports_raw):
        raw = _obj(raw, f"supports[{k}]")
        if "node" not in raw:
            raise SchemeError(f'supports[{k}]: field "node" is missing')
        nid = _str_id(raw["node"], f'supports[{k}]: field "node"')
        where = f'support at node "{nid}"'
        if nid not in nodes:
            raise SchemeError(f'supports[{k}]: field "node": unknown node "{nid}"')
        if nid in supports:
            raise SchemeError(f'{where}: field "node": node "{nid}" already has a support; use one support per node '
                              '(a "custom" support can combine restraints)')
        for key in raw:
            if key not in ("node", "kind", "angle", "fix"):
                raise SchemeError(f"{where}: unknown field {json.dumps(key)}")
        kind = raw.get("kind")
        if kind not in SUPPORT_KINDS:
            raise SchemeError(f'{where}: field "kind": unknown kind {json.dumps(kind)} '
                              f'(allowed: {", ".join(SUPPORT_KINDS)})')
        angle = _num(raw.get("angle", 90.0), f'{where}: field "angle"')
        fix: tuple[str, ...] = ()
        if kind == "custom":
            if "fix" not in raw:
                raise SchemeError(f'{where}: field "fix" is missing (a custom support lists what it fixes)')
            fix = _words(raw["fix"], FIX_WORDS, f'{where}: field "fix"')
        elif "fix" in raw:
            raise SchemeError(f'{where}: field "fix": only a "custom" support takes a fix list')
        supports[nid] = Support(nid, kind, angle, fix)

    from .underlay import check_underlay  # local: underlay imports SchemeError from here

    check_underlay(data)  # validates the optional "underlay" block
    extra = {key: data[key] for key in EXTRA_KEYS if key in data}
    return Scheme(nodes, members, supports, title, units, extra)


def scheme_to_dict(scheme: Scheme) -> dict:
    """The JSON document of a scheme (format version 1)."""
    out: dict[str, Any] = {"format": FORMAT_NAME, "version": FORMAT_VERSION,
                           "title": scheme.title, "units": scheme.units}
    nodes = []
    for n in scheme.nodes.values():
        d: dict[str, Any] = {"id": n.id, "x": n.x, "y": n.y}
        if n.hinge:
            d["hinge"] = True
        nodes.append(d)
    members = []
    for m in scheme.members.values():
        d = {"id": m.id, "start": m.start, "end": m.end, "kind": m.kind}
        if m.releases_start or m.releases_end:
            d["releases"] = {"start": [w for w in ("moment", "shear", "axial") if w in m.releases_start],
                             "end": [w for w in ("moment", "shear", "axial") if w in m.releases_end]}
        if m.rise:
            d["rise"] = m.rise
        stiff = {}
        if m.axial_stiffness != 1.0:
            stiff["axial"] = m.axial_stiffness
        if m.bending_stiffness is not None:
            stiff["bending"] = m.bending_stiffness
        if stiff:
            d["stiffness"] = stiff
        members.append(d)
    supports = []
    for s in scheme.supports.values():
        d = {"node": s.node, "kind": s.kind}
        if s.angle != 90.0 or s.kind != "pin":
            d["angle"] = s.angle
        if s.kind == "custom":
            d["fix"] = list(s.fix)
        supports.append(d)
    out["nodes"] = nodes
    out["members"] = members
    out["supports"] = supports
    for key in EXTRA_KEYS:
        if key in scheme.extra:
            out[key] = scheme.extra[key]
    return out


def loads(text: str) -> Scheme:
    """Parse scheme JSON text."""
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise SchemeError(f"file: not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})") from None
    return scheme_from_dict(data)


def load(path: str | os.PathLike) -> Scheme:
    """Read a scheme file; raises :class:`SchemeError` (also for unreadable files)."""
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise SchemeError(f"file {p.name}: cannot be read ({exc.strerror or exc})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise SchemeError(f"file {p.name}: not UTF-8 text (is it a scheme file?)") from None
    return loads(text)


def dumps(scheme: Scheme) -> str:
    return json.dumps(scheme_to_dict(scheme), indent=1) + "\n"


def _target_mode(p: Path) -> int:
    """The mode the written file should have: the old file's, else the usual 0o666 - umask."""
    try:
        return p.stat().st_mode & 0o7777
    except OSError:
        umask = os.umask(0)
        os.umask(umask)
        return 0o666 & ~umask


def atomic_write_text(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` to ``path`` atomically (temporary file in the same folder + rename)."""
    with atomic_target(path) as tmp:
        with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())


@contextlib.contextmanager
def atomic_target(path: str | os.PathLike):
    """Context manager yielding a temporary path beside ``path``; on success it replaces
    ``path`` atomically, on error the temporary file is removed and ``path`` is untouched.

    For writers that want a file name (image and PDF writers)::

        with atomic_target("out.png") as tmp:
            image.save(tmp)
    """
    p = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=p.suffix or ".tmp", dir=str(p.parent or "."))
    os.close(fd)
    try:
        yield tmp
        os.chmod(tmp, _target_mode(p))
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


def save(scheme: Scheme, path: str | os.PathLike) -> None:
    """Save atomically in format version 1."""
    atomic_write_text(path, dumps(scheme))
