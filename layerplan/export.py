"""Write a Plan's outputs: plan.json, final.png, steps/NN.png, overlay.svg.

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
from .raster import render_steps

#: files that mark a folder as a layerplan output (safe to replace)
_MARKER = "plan.json"


def png_bytes(rgb: np.ndarray) -> bytes:
    """Encode an (H, W, 3) uint8 image as PNG (deterministic bytes)."""
    buf = io.BytesIO()
    Image.fromarray(np.ascontiguousarray(rgb, dtype=np.uint8), "RGB").save(buf, format="PNG", optimize=False)
    return buf.getvalue()


def simple_overlay_svg(plan: Plan) -> str:
    """A plain wall-scale SVG of every stroke (mm units, one group per layer)."""
    import svgwrite

    dwg = svgwrite.Drawing(
        size=(f"{plan.wall_width_mm:g}mm", f"{plan.wall_height_mm:g}mm"),
        viewBox=f"0 0 {plan.wall_width_mm:g} {plan.wall_height_mm:g}",
        profile="full",
    )
    dwg.add(dwg.rect((0, 0), (plan.wall_width_mm, plan.wall_height_mm), fill=plan.paint(plan.ground).srgb))
    for n, layer in enumerate(plan.layers, start=1):
        g = dwg.g(id=f"layer-{n:02d}", fill="none", stroke_linecap="round", stroke_linejoin="round")
        for s in layer.strokes:
            pts = [(round(float(x), 2), round(float(y), 2)) for x, y in s.path_mm]
            if len(pts) == 1:
                pts = pts * 2
            g.add(dwg.polyline(pts, stroke=plan.paint(s.paint).srgb, stroke_width=s.width_mm))
        dwg.add(g)
    return dwg.tostring()


def build_files(plan: Plan, **options) -> dict[str, bytes]:
    """Every output file of a plan, as relative path -> bytes."""
    files: dict[str, bytes] = {}
    rgb = plan.palette_rgb()
    steps = render_steps(plan)
    for n, canvas in enumerate(steps):
        files[f"steps/{n:02d}.png"] = png_bytes(rgb[canvas])
    files["final.png"] = png_bytes(rgb[steps[-1]])
    files["overlay.svg"] = simple_overlay_svg(plan).encode("utf-8")
    files["plan.json"] = plan.to_json().encode("utf-8")
    return files


def write_outputs(plan: Plan, out_dir, **options) -> Path:
    """Write all outputs of ``plan`` into ``out_dir``, atomically.

    Parameters
    ----------
    plan : Plan
    out_dir : path
        Created if missing. An existing folder is replaced only if it is empty or holds an
        earlier plan (a plan.json).

    Returns
    -------
    Path of the folder written.

    Raises
    ------
    ValueError
        If ``out_dir`` exists and is not a plan folder, or is a file.
    """
    out = Path(out_dir)
    if out.exists():
        if not out.is_dir():
            raise ValueError(f"output {out} exists and is not a folder")
        if any(out.iterdir()) and not (out / _MARKER).exists():
            raise ValueError(f"output folder {out} is not empty and holds no plan; refusing to overwrite it")
    out.parent.mkdir(parents=True, exist_ok=True)
    files = build_files(plan, **options)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
    try:
        # plan.json last: a folder without it never looks finished
        for rel in sorted(files, key=lambda r: r == "plan.json"):
            path = tmp / rel
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(files[rel])
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
