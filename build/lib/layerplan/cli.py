"""Command line: ``layerplan plan IMAGE --out DIR`` and friends."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from . import __version__, cli_paints
from .settings import DEFAULT_BRUSHES_MM, DEFAULT_STROKE_COST, MAX_PAINTS, MIN_PAINTS, Settings


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
    plan.add_argument("--stroke-cost", type=float, default=DEFAULT_STROKE_COST,
                      help="error a stroke must remove to be painted, in ΔE00 per brush-width square (default %(default)g)")
    plan.add_argument("--quiet", action="store_true", help="no progress bar")
    plan.add_argument("--inventory", metavar="FILE", default=None,
                      help="the paints you own, a TOML file, to mix recipes from (default: a basic acrylic set)")
    plan.add_argument("--free-palette", action="store_true",
                      help="keep the photo's own colours instead of the colours the recipes will mix to")
    cli_paints.add_mix_options(plan)
    _add_output_options(plan)
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
    render = sub.add_parser("render", help="rebuild a plan's outputs from its plan.json",
                            description="Rebuild plan.html, overlay.svg, the pictures and quantities from a "
                                        "plan.json, e.g. after changing the quantity options. The strokes are "
                                        "not re-planned.")
    render.add_argument("plan_json", metavar="PLAN.json", help="a plan.json written by `layerplan plan`")
    render.add_argument("--out", required=True, help="folder to write the outputs into")
    _add_output_options(render)
    render.set_defaults(func=cmd_render)
    cli_paints.register(sub)
    return p


def _add_output_options(p: argparse.ArgumentParser) -> None:
    """Quantity and print options shared by `plan` and `render`."""
    from .quantities import COVERAGE_M2_PER_L, GROUND_COATS, STROKE_COATS, WASTE

    g = p.add_argument_group("quantities and printing")
    g.add_argument("--coverage", type=float, default=COVERAGE_M2_PER_L, metavar="M2_PER_L",
                   help="spreading rate of one coat, m² per litre (default %(default)g; check your tins)")
    g.add_argument("--ground-coats", type=int, default=GROUND_COATS, metavar="N",
                   help="coats of the ground (default %(default)s)")
    g.add_argument("--stroke-coats", type=int, default=STROKE_COATS, metavar="N",
                   help="coats of each stroke (default %(default)s)")
    g.add_argument("--waste", default=f"{WASTE * 100:g}%",
                   help="extra paint to buy, as a fraction or a percentage: 0.15 or 15%% (default %(default)s)")
    g.add_argument("--grid", default=None, metavar="LENGTH",
                   help="transfer-grid square with a unit, e.g. 50cm, 2ft (plain numbers are mm; "
                        "default 50cm, or 2ft for walls given in ft or in)")


def _output_options(args) -> dict:
    """The export options from the command line, checked (before any long work)."""
    import math
    import re

    from .quantities import check_options
    from .units import to_mm

    text = str(args.waste).strip()
    try:
        waste = float(text[:-1]) / 100.0 if text.endswith("%") else float(text)
    except ValueError:
        raise UsageError(f"--waste must be a fraction or a percentage such as 0.15 or 15%, got {args.waste!r}") from None
    try:
        check_options(coverage_m2_per_litre=args.coverage, waste=waste, ground_coats=args.ground_coats,
                      stroke_coats=args.stroke_coats)
    except ValueError as exc:
        names = {"coverage_m2_per_litre": "--coverage", "waste": "--waste", "ground_coats": "--ground-coats",
                 "stroke_coats": "--stroke-coats"}
        msg = str(exc)
        for name, flag in names.items():
            msg = msg.replace(name, flag)
        raise UsageError(msg) from exc
    if args.grid is None:  # the default: 50 cm, or 2 ft for walls in ft/in (layerplan.report.default_grid_mm)
        return {"coverage_m2_per_litre": args.coverage, "waste": waste, "ground_coats": args.ground_coats,
                "stroke_coats": args.stroke_coats, "grid_mm": None}
    m = re.fullmatch(r"\s*([0-9]*\.?[0-9]+)\s*([a-zA-Z]*)\s*", str(args.grid))
    try:
        if not m:
            raise ValueError("not a length")
        grid_mm = to_mm(float(m.group(1)), m.group(2) or "mm")
    except ValueError as exc:
        raise UsageError(f"--grid must be a length such as 50cm or 2ft, got {args.grid!r} ({exc})") from exc
    if not math.isfinite(grid_mm) or grid_mm <= 0:
        raise UsageError(f"--grid must be > 0, got {args.grid!r}")
    return {"coverage_m2_per_litre": args.coverage, "waste": waste, "ground_coats": args.ground_coats,
            "stroke_coats": args.stroke_coats, "grid_mm": grid_mm}


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
    from .export import check_destination, write_outputs
    from .load import load_image
    from .pipeline import make_plan
    from .progress import TerminalBar
    from .svg import MAX_GRID_LINES

    settings = _settings_from_args(args)
    options = _output_options(args)
    try:
        settings = settings.validated()
    except ValueError as exc:
        raise UsageError(cli_paints.name_option(str(exc))) from exc
    # the height may come from the photo: checked at export
    if options["grid_mm"] is not None and settings.wall_width_mm / options["grid_mm"] > MAX_GRID_LINES:
        raise UsageError(f"--grid {args.grid} is too fine for a {settings.wall_width_mm / 1000:g} m wide wall "
                         f"(at most {MAX_GRID_LINES} squares across)")
    try:
        out = check_destination(args.out)  # before the long work, not after it
    except ValueError as exc:
        raise UsageError(f"--out: {exc}") from exc
    if settings.inventory is not None:  # a bad paints file fails before the long work starts
        from .inventory import load_inventory

        load_inventory(settings.inventory)
    image = load_image(args.image)
    bar = None if args.quiet else TerminalBar(sys.stderr)
    plan = make_plan(image, settings, progress=bar)
    plan.extra["source"] = {"image": Path(args.image).name}
    write_outputs(plan, out, **options)
    if not args.quiet:
        print(f"plan written to {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints, "
              f"{len(plan.layers)} layers)", file=sys.stderr)
    return 0


def cmd_render(args) -> int:
    from .export import write_outputs
    from .plan import Plan

    options = _output_options(args)
    src = Path(args.plan_json)
    if not src.is_file():
        raise UsageError(f"{src} is not a file; give the plan.json a `layerplan plan` wrote")
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise UsageError(f"--out {out} exists and is not a folder")
    try:
        text = src.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise UsageError(f"{src} is not a plan.json (not UTF-8 text)") from exc
    try:
        plan = Plan.from_json(text)
    except ValueError as exc:
        raise UsageError(f"{src}: {exc}") from exc
    write_outputs(plan, out, **options)
    print(f"outputs rebuilt in {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints)", file=sys.stderr)
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
