"""Command line: ``layerplan plan IMAGE --out DIR`` and friends.

The planning, mixing and quantity options are made from :mod:`layerplan.options`, where
each is declared once. Everything heavy (the planner, scikit-learn, numba, Flask) is
imported inside the command that needs it, so ``layerplan --help``, ``layerplan paints``
and ``layerplan mix`` start quickly.
"""

from __future__ import annotations

import argparse
import dataclasses
import sys
from pathlib import Path

from . import __version__, options


class UsageError(Exception):
    """A bad argument: reported on stderr with exit status 2."""


#: largest plan.json `layerplan render` reads, bytes (a plan at the 8-megapixel limit is some 70 MB)
MAX_PLAN_JSON_BYTES = 300_000_000


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
    plan.add_argument("--quiet", action="store_true", help="no progress bar")
    options.add_cli_options(plan, "plan")
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
    options.add_cli_options(render, "render")
    render.set_defaults(func=cmd_render)
    warm = sub.add_parser("warm", help="prepare the planner once after installing (a few minutes)",
                          description="Compile the planner's fast code once, so that every plan after it "
                                      "starts within seconds (run it after installing or upgrading).")
    warm.set_defaults(func=lambda args: __import__("layerplan.warm", fromlist=["main"]).main())
    from . import cli_paints  # its commands import their own heavy parts when run

    cli_paints.register(sub)
    from . import cli_swatches

    cli_swatches.register(sub)
    from . import cli_machine

    cli_machine.register(sub)
    return p


def cmd_plan(args) -> int:
    from .caveats import raster_warnings
    from .export import check_destination, check_site, write_outputs
    from .inventory import default_inventory, load_inventory
    from .load import load_image
    from .pipeline import make_plan
    from .progress import TerminalBar
    from .settings import Settings

    # every option is checked before the long work: alone as argparse reads it, then
    # together (settings, then against the photo once its shape is known)
    values = options.values_from_cli(args, "plan")
    settings = Settings(**options.settings_kwargs(values)).validated()
    output = options.output_kwargs(values)
    try:  # before the long work: a folder that cannot take the plan is said now, not after it
        out = check_destination(args.out, photo=args.image)
    except ValueError as exc:
        raise UsageError(f"--out: {exc}") from None
    try:
        inventory = default_inventory() if settings.inventory is None else load_inventory(settings.inventory)
    except ValueError as exc:  # the message names the file, line and field
        raise UsageError(f"--inventory: {exc}") from None
    image = load_image(args.image)
    size = options.check_plan(settings, output, image.shape, inventory_paints=len(inventory))
    try:  # the site photo is read and its corners checked before the long work too
        check_site(output.get("site_photo"), output.get("site_corners"))
    except ValueError as exc:
        raise UsageError(f"--site-photo / --corners: {exc}") from exc
    # said before the long work, so the painter can stop and fix it; the plan carries the same words
    _print_warnings(raster_warnings(size, settings.brushes_mm, pixel_given=settings.mm_per_px is not None))
    bar = None if args.quiet else TerminalBar(sys.stderr)
    hours, strokes = values.get("hours"), values.get("strokes")
    if hours is not None and strokes is not None:
        raise UsageError("give one budget: --hours (with --crew) or --strokes, not both")
    if hours is not None or strokes is not None:
        from .budget import budget_words, fit_to_budget

        # the stroke cost is searched for the plan that comes closest to the budget (a few plans' time)
        plan = fit_to_budget(image, settings, hours=hours, strokes=strokes, crew=output.get("crew", 1),
                             quantity_options=output, progress=bar)
        print(f"layerplan: {budget_words(plan.extra['budget'])}", file=sys.stderr)
    else:
        plan = make_plan(image, settings, progress=bar)
    # a new plan with its source named (the Plan make_plan returned is never changed)
    plan = dataclasses.replace(plan, extra={**plan.extra, "source": {"image": Path(args.image).name}})
    write_outputs(plan, out, photo=args.image, **output)
    if not args.quiet:
        print(f"plan written to {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints, "
              f"{len(plan.layers)} layers)", file=sys.stderr)
    _print_pdf_note()
    return 0


def _print_warnings(found) -> None:
    for warning in found:  # what is wrong on the warning's line, then why and the fix
        print(f"layerplan: warning: {warning['message']}", file=sys.stderr)
        for key in ("cause", "fix"):
            if isinstance(warning.get(key), str):
                print(f"  {warning[key]}", file=sys.stderr)


def _print_pdf_note() -> None:
    from .pdf import unavailable

    reason = unavailable()
    if reason is not None:
        print(f"layerplan: note: plan.pdf was not written: {reason}; plan.html prints the same sheets "
              "from a browser", file=sys.stderr)


def cmd_render(args) -> int:
    from .caveats import plan_warnings
    from .export import check_destination, write_outputs
    from .plan import Plan

    output = options.output_kwargs(options.values_from_cli(args, "render"))
    src = Path(args.plan_json)
    if not src.is_file():  # a device or a pipe (/dev/zero) is no plan.json either
        raise UsageError(f"{src} is not a file; give the plan.json a `layerplan plan` wrote")
    try:
        out = check_destination(args.out)
    except ValueError as exc:
        raise UsageError(f"--out: {exc}") from None
    with src.open("rb") as f:
        data = f.read(MAX_PLAN_JSON_BYTES + 1)
    if len(data) > MAX_PLAN_JSON_BYTES:
        raise UsageError(f"{src} is over {MAX_PLAN_JSON_BYTES // 1_000_000} MB; a plan.json of the largest plan "
                         f"is well under that")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise UsageError(f"{src} is not a plan.json (not UTF-8 text)") from None
    try:
        plan = Plan.from_json(text)
    except ValueError as exc:
        raise UsageError(f"{src}: {exc}") from None
    options.check_grid(plan.wall_width_mm, plan.wall_height_mm, output.get("grid_mm"))
    from .classroom import with_class  # a changed class: new figures, the same strokes

    plan = with_class(plan, options.values_from_cli(args, "render"))
    write_outputs(plan, out, **output)
    print(f"outputs rebuilt in {out}/ ({plan.stroke_count()} strokes, {len(plan.palette)} paints)", file=sys.stderr)
    _print_warnings(plan_warnings(plan))  # what the plan said when it was made still holds
    _print_pdf_note()
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
    import logging

    # the server's one-line records (a refused request, a failed plan, a repair on start) reach stderr
    logging.basicConfig(level=logging.INFO, format="%(asctime)s %(levelname)s %(name)s: %(message)s")
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
    try:
        args = parser.parse_args(argv)
    except options.CliOptionError as exc:  # a value its option's reader refused
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return 2
    try:
        return int(args.func(args) or 0)
    except options.OptionError as exc:  # options that do not go together, or with the photo
        print(f"layerplan: error: {exc.cli_message()}", file=sys.stderr)
        return 2
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
