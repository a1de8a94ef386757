"""The ``kinestat`` command.

``kinestat [FILE]`` opens the desktop app; ``kinestat <command> ...`` runs a headless
command.  Each command lives in its own module named in :data:`COMMANDS` with two
functions, ``add_arguments(parser)`` and ``run(args) -> int``; modules are imported only
when their command runs, so ``kinestat check`` never imports Qt.
"""
from __future__ import annotations

import argparse
import importlib
import os
import sys

#: command name -> (module, one-line help)
COMMANDS: dict[str, tuple[str, str]] = {
    "check": ("kinestat.app.cmd_check", "classify scheme files: stable, determinate or indeterminate"),
    "motion": ("kinestat.app.cmd_motion", "trace the mechanism motion of an unstable scheme"),
    "primary": ("kinestat.app.cmd_primary", "releases that leave a determinate primary structure"),
    "remedies": ("kinestat.app.cmd_remedies", "single changes that remove mechanisms"),
    "render": ("kinestat.app.cmd_render", "render a scheme with its verdict to PNG (headless)"),
    "report": ("kinestat.app.cmd_report", "write a PDF check report"),
    "convert": ("kinestat.app.cmd_convert", "convert between DXF line work and scheme JSON"),
}


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="kinestat",
        description="kinestat: stability and determinacy of 2D framing schemes. "
        "Concept-stage check only; not structural design.",
    )
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for name, (module, help_) in COMMANDS.items():
        sp = sub.add_parser(name, help=help_, description=help_)
        try:
            mod = importlib.import_module(module)
        except ModuleNotFoundError as exc:
            if exc.name != module:
                raise
            continue
        mod.add_arguments(sp)
        sp.set_defaults(_run=mod.run)
    return p


def _pin_blas_threads() -> None:
    """One BLAS thread unless the user says otherwise: the engine's dense work is small and
    many-threaded BLAS on a busy 2-core machine was measured 5-20x slower."""
    for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(var, "1")


def main(argv: list[str] | None = None) -> int:
    _pin_blas_threads()
    try:
        return _main(argv)
    except BrokenPipeError:
        # output piped into e.g. `head`: stop quietly
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return 0


def _main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or argv[0] not in COMMANDS and argv[0] not in ("-h", "--help"):
        # the desktop app, optionally on a file
        from kinestat.app.gui import run_gui  # imports Qt

        return run_gui(argv)
    # import only the module of the command that runs
    name = argv[0]
    if name in COMMANDS:
        p = argparse.ArgumentParser(prog=f"kinestat {name}", description=COMMANDS[name][1])
        mod = importlib.import_module(COMMANDS[name][0])
        mod.add_arguments(p)
        args = p.parse_args(argv[1:])
        return int(mod.run(args) or 0)
    _parser().parse_args(argv)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
