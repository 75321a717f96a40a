"""Write a Plan's outputs: plan.json, final.png, steps/NN.png, steps/NN.svg, overlay.svg, plan.html.

Exporters read a `Plan` and nothing else. Everything is written into a temporary
folder beside the destination and moved into place at the end, so a failed run never
leaves a plan that looks finished.
"""

from __future__ import annotations

import io
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np
from PIL import Image

from .plan import Plan

#: files that mark a folder as a layerplan output (safe to replace)
_MARKER = "plan.json"


def png_bytes(rgb: np.ndarray) -> bytes:
    """Encode an (H, W, 3) uint8 image as PNG (deterministic bytes)."""
    buf = io.BytesIO()
    Image.fromarray(np.ascontiguousarray(rgb, dtype=np.uint8), "RGB").save(buf, format="PNG", optimize=False)
    return buf.getvalue()


#: options of :func:`build_files` / :func:`write_outputs` for quantities (see layerplan.quantities.paint_use)
QUANTITY_OPTIONS = ("coverage_m2_per_litre", "waste", "ground_coats", "stroke_coats", "containers")


def build_files(plan: Plan, *, grid_mm: float | None = None, **options) -> dict[str, bytes]:
    """Every output file of a plan, as relative path -> bytes.

    ``steps/NN.png`` is the wall after layer NN (``00``: the ground); ``steps/NN.svg`` holds
    layer NN's strokes alone with its outline map, for projecting; ``overlay.svg`` the whole
    plan with the transfer grid and (hidden) outline maps; ``plan.html`` the printable plan.
    The quantities (``options``: coverage_m2_per_litre, waste, ground_coats, stroke_coats,
    containers) go into ``plan.extra["paint_use"]`` and so into plan.json. ``grid_mm`` is the
    transfer-grid square (default 500 mm, or 2 ft for walls measured in ft or in).

    Raises
    ------
    ValueError
        An unknown option, or a bad quantity or grid option (the message names it).
    """
    from .outlines import layer_canvas, layer_outlines
    from .quantities import paint_use
    from .report import default_grid_mm, plan_html
    from .svg import check_grid, layer_svg, overlay_svg, prepare_outline

    unknown = sorted(set(options) - set(QUANTITY_OPTIONS))
    if unknown:
        raise ValueError(f"unknown export option(s) {', '.join(unknown)}; valid: grid_mm, {', '.join(QUANTITY_OPTIONS)}")
    unit = str((plan.extra.get("settings") or {}).get("wall_unit", "m"))
    if grid_mm is None:
        grid_mm = default_grid_mm(unit, shorter_side_mm=min(plan.wall_width_mm, plan.wall_height_mm))
    grid_mm = check_grid(plan, grid_mm)
    plan.extra["paint_use"] = paint_use(plan, **options)
    files: dict[str, bytes] = {}
    rgb = plan.palette_rgb()
    # each layer rasterised once: its outline map and the wall after it both come from it
    # (the same pixels as raster.render_steps: strokes are opaque, so a layer's canvas
    # over the wall before it is the wall after it)
    canvases = [layer_canvas(plan, n) for n in range(1, len(plan.layers) + 1)]
    steps = [np.full((plan.height_px, plan.width_px), plan.paint_index()[plan.ground], dtype=np.int16)]
    for canvas in canvases:
        steps.append(np.where(canvas >= 0, canvas, steps[-1]))
    for n, canvas in enumerate(steps):
        files[f"steps/{n:02d}.png"] = png_bytes(rgb[canvas])
    files["final.png"] = files[f"steps/{len(steps) - 1:02d}.png"]  # the wall after the last layer
    # each map traced and written out as SVG text once, then drawn three times
    maps = [prepare_outline(plan, layer_outlines(plan, n, canvas=canvases[n - 1]))
            for n in range(1, len(plan.layers) + 1)]
    for n in range(1, len(plan.layers) + 1):
        files[f"steps/{n:02d}.svg"] = layer_svg(plan, n, outline=maps[n - 1]).encode("utf-8")
    files["overlay.svg"] = overlay_svg(plan, grid_mm=grid_mm, outlines=maps).encode("utf-8")
    images = {name[:-4]: data for name, data in files.items() if name.endswith(".png")}
    files["plan.html"] = plan_html(plan, images=images, grid_mm=grid_mm, outlines=maps,
                                   paint_use=plan.extra["paint_use"], steps=steps).encode("utf-8")
    files["plan.json"] = plan.to_json().encode("utf-8")
    return files


def _folder_mode(private: Path) -> int:
    """Permission bits a new folder gets: 0o777 less the umask (POSIX mkdir).

    Found by making a folder inside ``private`` (a folder of ours) rather than with
    ``os.umask``, which can only be read by setting it, for the whole process, under the
    feet of other threads (the web app writes plans from worker threads).
    """
    probe = private / ".mode-probe"
    probe.mkdir()
    try:
        return probe.stat().st_mode & 0o777
    finally:
        probe.rmdir()


def check_destination(out_dir) -> Path:
    """Check that a plan may be written to ``out_dir`` (call it before long work too).

    Raises
    ------
    ValueError
        If ``out_dir`` is a file, or a folder that is neither empty nor an earlier plan.
    """
    out = Path(out_dir)
    if out.exists():
        if not out.is_dir():
            raise ValueError(f"output {out} exists and is not a folder")
        if any(out.iterdir()) and not (out / _MARKER).exists():
            raise ValueError(f"output folder {out} is not empty and holds no plan; refusing to overwrite it")
    return out


def write_outputs(plan: Plan, out_dir, **options) -> Path:
    """Write all outputs of ``plan`` into ``out_dir``, atomically.

    Parameters
    ----------
    plan : Plan
    out_dir : path
        Created if missing. An existing folder is replaced only if it is empty or holds an
        earlier plan (a plan.json).
    **options
        ``grid_mm`` and the quantity options, passed to :func:`build_files`.

    Returns
    -------
    Path of the folder written.

    Raises
    ------
    ValueError
        If ``out_dir`` exists and is not a plan folder, or is a file; or a bad option.
    """
    out = check_destination(out_dir)
    out.parent.mkdir(parents=True, exist_ok=True)
    files = build_files(plan, **options)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        # plan.json last: a folder without it never looks finished
        for rel in sorted(files, key=lambda r: r == "plan.json"):
            path = tmp / rel
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(files[rel])
        # mkdtemp makes the folder 0700; a finished plan gets the usual mode for a new folder
        tmp.chmod(_folder_mode(tmp))
        old = None
        if out.exists():
            old = out.with_name(f".{out.name}.old-{os.getpid()}")
            os.replace(out, old)
        os.replace(tmp, out)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return out
