"""Packaging and layering guards (common practice for a setuptools package-dir mapping).

* every folder with an ``__init__.py`` under a mapped package directory is listed in
  ``[tool.setuptools] packages`` (an unlisted subpackage would be missing from a wheel);
* the bare folder names ``core`` / ``app`` are not importable (one import namespace:
  ``kinestat.core``, ``kinestat.app``);
* ``kinestat.core`` never imports Qt or the app.
"""
from __future__ import annotations

import importlib.util
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _setuptools() -> dict:
    with open(ROOT / "pyproject.toml", "rb") as fh:
        return tomllib.load(fh)["tool"]["setuptools"]


def test_package_dir_mapping_is_the_one_namespace():
    mapping = _setuptools()["package-dir"]
    assert mapping["kinestat.core"] == "core"
    assert mapping["kinestat.app"] == "app"
    assert mapping["kinestat.assets"] == "assets"
    assert mapping["kinestat.examples"] == "examples"


def test_every_subpackage_is_listed():
    cfg = _setuptools()
    listed = set(cfg["packages"])
    found = set()
    for pkg, folder in cfg["package-dir"].items():
        base = ROOT / folder
        assert (base / "__init__.py").exists(), f"{folder}/ has no __init__.py"
        for init in base.rglob("__init__.py"):
            rel = init.parent.relative_to(base)
            if any(part.startswith((".", "__pycache__")) for part in rel.parts):
                continue
            found.add(".".join((pkg, *rel.parts)) if rel.parts else pkg)
    assert found - listed == set(), f"subpackages missing from [tool.setuptools] packages: {sorted(found - listed)}"
    assert listed - found == set(), f"listed packages with no folder: {sorted(listed - found)}"


def test_bare_folder_names_are_not_importable():
    # run from the repository root, where a bare `core` folder would shadow the namespace
    code = ("import importlib.util, sys\n"
            "sys.path[:] = [p for p in sys.path if p not in ('', '.')]\n"
            "print(importlib.util.find_spec('core') is None, importlib.util.find_spec('app') is None)\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=60)
    assert proc.stdout.split() == ["True", "True"], proc.stderr
    # and in this test process (pytest runs with --import-mode=importlib; tests/ is on the path,
    # so a bare "core" may only resolve to the test folder tests/core, never to the engine)
    for bare in ("core", "app"):
        spec = importlib.util.find_spec(bare)
        where = [] if spec is None else [Path(p).resolve() for p in (spec.submodule_search_locations or [])]
        assert ROOT / bare not in where, f"bare {bare!r} resolves to the source folder"
        assert spec is None or spec.origin is None        # at most the tests/ namespace folder
    assert importlib.util.find_spec("kinestat.core") is not None


def test_core_never_imports_qt_or_the_app():
    code = (
        "import importlib, pkgutil, sys\n"
        "import kinestat.core as core\n"
        "names = [m.name for m in pkgutil.walk_packages(core.__path__, 'kinestat.core.')]\n"
        "for n in names:\n"
        "    importlib.import_module(n)\n"
        "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('PySide6', 'shiboken6')\n"
        "             or m == 'kinestat.app' or m.startswith('kinestat.app.'))\n"
        "print(len(names))\n"
        "print('BAD:' + ','.join(bad))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert proc.returncode == 0, proc.stderr
    count, bad = proc.stdout.strip().splitlines()[-2:]
    assert int(count) >= 8            # model, io, assemble, rank, counting, classify, explain, ...
    assert bad == "BAD:", bad


def test_core_uses_relative_imports_only():
    # imports inside core are relative (RULES 8): no `from kinestat.core` / `import kinestat` in core/
    offenders = []
    for path in (ROOT / "core").rglob("*.py"):
        for k, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
            s = line.strip()
            if s.startswith(("from kinestat", "import kinestat")):
                offenders.append(f"{path.relative_to(ROOT)}:{k}")
    assert offenders == []


def test_schema_and_examples_are_package_data():
    data = _setuptools()["package-data"]
    assert "*.json" in data["kinestat.core"]          # core/scheme.schema.json
    assert "*.json" in data["kinestat.examples"]
    from importlib.resources import files

    assert files("kinestat.core").joinpath("scheme.schema.json").is_file()
