"""Command line: ``layerplan plan IMAGE --out DIR`` and friends."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__, cli_paints
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
    plan.add_argument("--inventory", metavar="FILE", default=None,
                      help="the paints you own, a TOML file, to mix recipes from (default: a basic acrylic set)")
    plan.add_argument("--free-palette", action="store_true",
                      help="keep the photo's own colours instead of the colours the recipes will mix to")
    cli_paints.add_mix_options(plan)
    plan.set_defaults(func=cmd_plan)

    serve = sub.add_parser("serve", help="run the web app",
                           description="Run the layerplan web app (waitress WSGI server). Plans and their files "
                                       "are kept under the data directory.")
    serve.add_argument("--host", default="127.0.0.1",
                       help="address to listen on (default %(default)s: this machine only)")
    serve.add_argument("--port", type=int, default=5000, help="port (default %(default)s)")
    serve.add_argument("--data-dir", default=None,
                       help="where plans are stored (default: $LAYERPLAN_DATA_DIR, else the app's instance folder)")
    serve.add_argument("--workers", type=int, default=None,
                       help="plans made at the same time (default: half the CPU cores, at least 1)")
    serve.add_argument("--threads", type=int, default=8, help="web server threads (default %(default)s)")
    serve.set_defaults(func=cmd_serve)
    cli_paints.register(sub)
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
        brushes_mm=brushes, mm_per_px=args.pixel_mm, seed=args.seed, stroke_cost=args.stroke_cost,
        inventory=args.inventory, free_palette=args.free_palette, mix_paints=args.mix_paints,
        max_parts=args.max_parts, tolerance_de=args.tolerance, extra=extra,
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
    if settings.inventory is not None:  # a bad paints file fails before the long work starts
        from .inventory import load_inventory

        load_inventory(settings.inventory)
    image = load_image(args.image)
    bar = None if args.quiet else TerminalBar(sys.stderr)
    plan = make_plan(image, settings, progress=bar)
    plan.extra["source"] = {"image": Path(args.image).name}
    write_outputs(plan, out)
    if not args.quiet:
        print(f"plan written to {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints, "
              f"{len(plan.layers)} layers)", file=sys.stderr)
    return 0


def cmd_serve(args) -> int:
    import os

    import waitress

    from .web import create_app

    if not 0 < args.port < 65536:
        raise UsageError(f"--port must be from 1 to 65535, got {args.port}")
    if args.workers is not None and args.workers < 1:
        raise UsageError(f"--workers must be at least 1, got {args.workers}")
    if args.threads < 1:
        raise UsageError(f"--threads must be at least 1, got {args.threads}")
    overrides = {}
    if args.data_dir:
        overrides["DATA_DIR"] = args.data_dir
    elif os.environ.get("LAYERPLAN_DATA_DIR"):
        overrides["DATA_DIR"] = os.environ["LAYERPLAN_DATA_DIR"]
    if args.workers is not None:
        overrides["WORKERS"] = args.workers
    try:
        app = create_app(None, overrides=overrides)
    except RuntimeError as exc:
        raise UsageError(str(exc)) from exc
    state = app.extensions["layerplan"]
    print(f"layerplan: serving on http://{args.host}:{args.port}/ (data in {app.config['DATA_DIR']}; "
          f"Ctrl-C to stop)", file=sys.stderr)
    import signal

    def _stop(signum, frame):  # a service manager's SIGTERM: stop workers cleanly, as Ctrl-C does
        raise KeyboardInterrupt

    signal.signal(signal.SIGTERM, _stop)
    try:
        waitress.serve(app, host=args.host, port=args.port, threads=args.threads, ident="layerplan")
    except KeyboardInterrupt:
        print("layerplan: stopped; unfinished plans resume on the next start", file=sys.stderr)
    finally:
        state.close()
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
