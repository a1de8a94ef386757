"""``kinestat convert``: DXF line work to a scheme file and back.

``kinestat convert IN.dxf -o OUT.json [--layer NAME=bar|beam|skip ...] [--tol T] [--units U]``
imports line work and prints what was imported and what was skipped and why;
``kinestat convert IN.json -o OUT.dxf`` exports a scheme as line work.  Bad input gives one
line on stderr naming the item and field, exit status 2, and no output file (saves are
atomic).  No Qt here.
"""
from __future__ import annotations

import argparse
import math
import sys
from pathlib import Path

from kinestat.core.dxf import LAYER_CHOICES, UNIT_CODES, DxfError, read_dxf, write_dxf
from kinestat.core.io import SchemeError, load, save

_PROG = "kinestat convert"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("input", help="a DXF drawing (.dxf) or a scheme file (.json)")
    p.add_argument("-o", "--output", required=True, help="OUT.json when reading a DXF, OUT.dxf when reading a scheme")
    p.add_argument("--layer", action="append", default=[], metavar="NAME=KIND",
                   help="what the line work on a layer becomes: bar, beam or skip (repeatable; "
                        "NAME * stands for every other layer; other layers become beams)")
    p.add_argument("--tol", metavar="T",
                   help="merge tolerance in drawing units (default: 0.001 x the median segment length)")
    p.add_argument("--units", metavar="U",
                   help=f"drawing units when the header has none or is wrong ({', '.join(UNIT_CODES)})")
    p.add_argument("--all", action="store_true", help="list every skipped item in the report")
    p.add_argument("--no-labels", action="store_true", help="DXF export: leave out the member and node id labels")


def _fail(msg: str) -> int:
    print(f"{_PROG}: {msg}", file=sys.stderr)
    return 2


def _parse_layers(specs: list[str]) -> dict[str, str]:
    out: dict[str, str] = {}
    for spec in specs:
        name, sep, kind = spec.rpartition("=")
        name = name.strip()
        kind = kind.strip().lower()
        if not sep or not name:
            raise ValueError(f'--layer "{spec}": expected NAME=KIND, e.g. --layer BRACING=bar')
        if kind not in LAYER_CHOICES:
            raise ValueError(f'--layer "{spec}": unknown kind "{kind}" (allowed: {", ".join(LAYER_CHOICES)})')
        if name.casefold() in {k.casefold() for k in out}:
            raise ValueError(f'--layer "{spec}": layer "{name}" is given twice')
        out[name] = kind
    return out


def run(args: argparse.Namespace) -> int:
    src, dst = Path(args.input), Path(args.output)
    s_ext, d_ext = src.suffix.lower(), dst.suffix.lower()
    if s_ext == ".dxf":
        if d_ext != ".json":
            return _fail(f"-o {dst}: a DXF drawing converts to a scheme file; give an output ending in .json")
        return _dxf_to_json(args, src, dst)
    if s_ext == ".json":
        if d_ext != ".dxf":
            return _fail(f"-o {dst}: a scheme file converts to a DXF drawing; give an output ending in .dxf")
        return _json_to_dxf(args, src, dst)
    return _fail(f"{src}: unknown input type {s_ext or '(no extension)'}: give a .dxf drawing or a .json scheme")


def _dxf_to_json(args: argparse.Namespace, src: Path, dst: Path) -> int:
    try:
        layers = _parse_layers(args.layer)
    except ValueError as exc:
        return _fail(str(exc))
    tol = None
    if args.tol is not None:
        try:
            tol = float(args.tol)
        except ValueError:
            return _fail(f'--tol "{args.tol}": not a number')
        if not math.isfinite(tol) or tol <= 0:
            return _fail(f'--tol "{args.tol}": must be a positive number (drawing units)')
    try:
        scheme, report = read_dxf(src, layers=layers, tol=tol, units=args.units)
    except SchemeError as exc:  # DxfError included
        return _fail(str(exc))
    if report.unused_mapping:
        name = report.unused_mapping[0]
        return _fail(f'--layer "{name}": no entity in {src.name} is on that layer '
                     f'(layers: {", ".join(report.drawing_layers) or "none"})')
    try:
        save(scheme, dst)
    except OSError as exc:
        return _fail(f"-o {dst}: cannot be written ({exc.strerror or exc})")
    for line in report.lines(limit=None if args.all else 20):
        print(line)
    if report.units_from == "assumed":
        print("  note: give --units if the drawing is not in metres")
    print(f"Wrote {dst}")
    return 0


def _json_to_dxf(args: argparse.Namespace, src: Path, dst: Path) -> int:
    for flag, value in (("--layer", args.layer), ("--tol", args.tol), ("--units", args.units)):
        if value:
            return _fail(f"{flag}: applies to a DXF import only")
    try:
        scheme = load(src)
    except SchemeError as exc:
        return _fail(f"{src.name}: {exc}" if not str(exc).startswith("file ") else str(exc))
    if not scheme.members:
        return _fail(f'{src.name}: section "members" is empty: nothing to draw')
    try:
        write_dxf(scheme, dst, labels=not args.no_labels)
    except DxfError as exc:
        return _fail(str(exc))
    except OSError as exc:
        return _fail(f"-o {dst}: cannot be written ({exc.strerror or exc})")
    n_arc = sum(1 for m in scheme.members.values() if m.rise)
    hinges = sum(1 for n in scheme.nodes.values() if n.hinge)
    print(f"Wrote {dst}: {len(scheme.members)} members ({len(scheme.members) - n_arc} LINE, {n_arc} ARC), "
          f"{len(scheme.supports)} support marks, {hinges} hinge marks, units {scheme.units}")
    if scheme.units not in UNIT_CODES:
        print(f'  note: units "{scheme.units}" have no DXF code; the drawing header says unitless')
    releases = sum(1 for m in scheme.members.values() if m.releases_start or m.releases_end)
    if releases:
        print(f"  note: end releases of {releases} members are not drawn; they stay in the scheme file")
    print("  Concept-stage check only, not structural design: local codes and a licensed engineer govern.")
    return 0
