"""Command line: ``layerplan plan IMAGE --out DIR`` and friends."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__
from .settings import DEFAULT_BRUSHES_MM, MAX_PAINTS, MIN_PAINTS, Settings


class UsageError(Exception):
    """A bad argument: reported on stderr with exit status 2."""


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="layerplan",
        description="Turn a photo into a layered painting plan at wall scale.",
    )
    p.add_argument("--version", action="version", version=f"layerplan {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    plan = sub.add_parser("plan", help="plan a painting of a photo", description="Plan a layered painting of a photo.")
    plan.add_argument("image", help="photo or design (JPEG, PNG, WebP, TIFF)")
    plan.add_argument("--out", required=True, help="folder to write the plan into")
    plan.add_argument("--wall", default=None,
                      help="surface size WxH with a unit: m, cm, mm, ft or in (e.g. 4x2.5m, 12x8ft); "
                           "default 3 m wide, height from the photo")
    plan.add_argument("--fit", choices=("cover", "contain"), default="cover",
                      help="cover: fill the wall and crop the overhang (default); contain: fit inside, "
                           "pad with the ground paint")
    plan.add_argument("--paints", type=int, default=8, help=f"number of paints, {MIN_PAINTS}-{MAX_PAINTS} (default 8)")
    plan.add_argument("--brushes", default=",".join(f"{b:g}" for b in DEFAULT_BRUSHES_MM),
                      help="brush widths in mm, comma-separated, one layer each (default %(default)s)")
    plan.add_argument("--pixel-mm", type=float, default=None,
                      help="wall size of one working pixel in mm (default: the narrowest brush spans 3 px, "
                           "raster at most 2 megapixels)")
    plan.add_argument("--seed", type=int, default=0, help="random seed; same inputs and seed give the same plan")
    plan.add_argument("--stroke-cost", type=float, default=1.0,
                      help="error a stroke must remove to be painted, in ΔE00 per brush-width square (default 1)")
    plan.add_argument("--quiet", action="store_true", help="no progress bar")
    plan.set_defaults(func=cmd_plan)
    return p


def _settings_from_args(args, image_shape=None) -> Settings:
    from .units import parse_brushes, parse_wall

    try:
        brushes = parse_brushes(args.brushes)
    except ValueError as exc:
        raise UsageError(f"--brushes: {exc}") from exc
    width_mm, height_mm, unit = 3000.0, None, "m"
    if args.wall:
        try:
            width_mm, height_mm, unit = parse_wall(args.wall)
        except ValueError as exc:
            raise UsageError(f"--wall: {exc}") from exc
    extra = {}
    return Settings(
        wall_width_mm=width_mm, wall_height_mm=height_mm, wall_unit=unit, fit=args.fit, paints=args.paints,
        brushes_mm=brushes, mm_per_px=args.pixel_mm, seed=args.seed, stroke_cost=args.stroke_cost, extra=extra,
    )


def cmd_plan(args) -> int:
    from .export import write_outputs
    from .load import load_image
    from .pipeline import make_plan
    from .progress import TerminalBar

    settings = _settings_from_args(args)
    try:
        settings = settings.validated()
    except ValueError as exc:
        raise UsageError(str(exc)) from exc
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise UsageError(f"--out {out} exists and is not a folder")
    image = load_image(args.image)
    bar = None if args.quiet else TerminalBar(sys.stderr)
    plan = make_plan(image, settings, progress=bar)
    plan.extra["source"] = {"image": Path(args.image).name}
    write_outputs(plan, out)
    if not args.quiet:
        print(f"plan written to {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints, "
              f"{len(plan.layers)} layers)", file=sys.stderr)
    return 0


def main(argv=None) -> int:
    """Run the command line; returns the exit status."""
    parser = _parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except UsageError as exc:
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return 2
    except ValueError as exc:  # bad input found by a stage (image, settings, plan file)
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return 2
    except OSError as exc:
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("layerplan: interrupted; nothing was written", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
