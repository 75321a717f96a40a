"""Command line: ``layerplan machine PLAN.json --format gcode|hpgl|svg --out FILE [--profile FILE]``.

Writes the plan's strokes as a program for a painting machine or a pen plotter
(:mod:`layerplan.machine`). Without ``--profile`` the example wall robot shipped with layerplan
is used (``layerplan/data/machine_wall_robot.toml``, which explains every key); ``--profile
pen-plotter-a3`` names the other shipped profile. Errors go to stderr as ``layerplan: error: ...``
with exit status 2; nothing is written then, and an existing file is never replaced.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

EXIT_USAGE = 2
#: :data:`layerplan.machine.FORMATS` and :data:`~layerplan.machine.PROFILES` keys, repeated so that
#: ``layerplan --help`` imports no numpy (tests/test_machine.py checks they agree)
FORMAT_NAMES = ("gcode", "hpgl", "svg")
PROFILE_NAMES = ("wall-robot", "pen-plotter-a3")


def register(subparsers) -> None:
    """Add the ``machine`` subcommand to an argparse subparsers object."""
    p = subparsers.add_parser(
        "machine", help="write a plan's strokes as a program for a painting machine or a pen plotter",
        description="Turn a plan.json into G-code (a painting machine: one tool change per paint run, brush "
                    "reloads at each paint's station), HPGL (one pen per paint) or SVG (a group per paint run, for "
                    "pen plotters), in the machine's own frame as a profile file describes it.")
    p.add_argument("plan_json", metavar="PLAN.json", help="a plan.json written by `layerplan plan`")
    p.add_argument("--format", required=True, choices=FORMAT_NAMES, help="program format")
    p.add_argument("--out", required=True, metavar="FILE", help="file to write (never replaced)")
    p.add_argument("--profile", metavar="FILE", default=None,
                   help=f"machine profile, a TOML file, or one of the shipped ones ({', '.join(PROFILE_NAMES)}; "
                        f"default {PROFILE_NAMES[0]})")
    p.set_defaults(func=cmd_machine)


def cmd_machine(args) -> int:
    """``layerplan machine``: exit status 0, or 2 with a message (nothing written)."""
    from .machine import PROFILES, MachineError, load_profile, machine_program, shipped_profile
    from .plan import Plan

    out = Path(args.out)
    if out.exists():
        print(f"layerplan: error: --out {out} exists; layerplan never replaces a file, so remove it or give "
              "another name", file=sys.stderr)
        return EXIT_USAGE
    src = Path(args.plan_json)
    try:
        plan = Plan.from_json(src.read_text(encoding="utf-8"))
    except FileNotFoundError:
        print(f"layerplan: error: {src} is not a file; give the plan.json a `layerplan plan` wrote", file=sys.stderr)
        return EXIT_USAGE
    except (OSError, UnicodeDecodeError, ValueError) as exc:
        print(f"layerplan: error: {src}: {exc}", file=sys.stderr)
        return EXIT_USAGE
    try:
        if args.profile is None or args.profile in PROFILES and not Path(args.profile).exists():
            profile = shipped_profile(args.profile or PROFILE_NAMES[0])
        else:
            profile = load_profile(args.profile)
        data = machine_program(plan, profile, args.format)
    except MachineError as exc:
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    try:
        # "x": a file that appeared meanwhile is still not replaced
        with open(out, "xb") as fh:
            fh.write(data)
    except FileExistsError:
        print(f"layerplan: error: --out {out} exists; remove it or give another name", file=sys.stderr)
        return EXIT_USAGE
    except OSError as exc:
        print(f"layerplan: error: cannot write {out}: {exc.strerror or exc}", file=sys.stderr)
        return 1
    print(f"layerplan: {args.format} program for {profile.name} written to {out} "
          f"({os.path.getsize(out)} bytes)", file=sys.stderr)
    return 0
