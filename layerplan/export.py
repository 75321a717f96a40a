"""Write a Plan's outputs: plan.json, final.png, steps/NN.png, steps/NN.svg, overlay.svg, plan.html, plan.pdf.

Exporters read a `Plan` and nothing else, and never write into it: figures derived from
the plan (the paint use, the wall after each layer, the outline maps) are worked out once
in :class:`ExportInputs` and handed to every exporter. The exports are named in one
registry, :data:`EXPORTS` (name -> :class:`Export`: builder, label, media type, file
names); :func:`build_files` runs it and the web page's download list reads it, so a new
export is one entry there.

Everything is written into a temporary folder beside the destination and moved into
place at the end, so a failed run never leaves a plan that looks finished.
"""

from __future__ import annotations

import dataclasses
import io
import os
import re
import shutil
import tempfile
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from types import MappingProxyType
from typing import Any

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


# ------------------------------------------------------------------ what the exporters share
@dataclass(frozen=True)
class ExportInputs:
    """A plan and what is derived from it once for all exporters (read-only).

    The derived pictures and maps are worked out on first use and kept, so each is made
    once however many exporters draw it.

    Attributes
    ----------
    plan : Plan
    paint_use : mapping
        :func:`layerplan.quantities.paint_use` of the plan, with the export's options.
    grid_mm : float
        Transfer-grid square, mm of wall (checked by :func:`layerplan.svg.check_grid`).
    paper : str
        The paper plan.html is laid out for (a key of :data:`layerplan.sheets.PAPERS`).
    enlargements_per_layer : int, optional
        Most enlargement sheets of one layer in plan.html (default that of :func:`layerplan.sheets.build_sheets`).
    """

    plan: Plan
    paint_use: Mapping[str, Any]
    grid_mm: float
    paper: str = "a4"
    enlargements_per_layer: int | None = None

    @cached_property
    def canvases(self) -> tuple[np.ndarray, ...]:
        """(H, W) int16 palette index per pixel for each layer alone (-1 where it leaves the wall)."""
        from .outlines import layer_canvas

        return tuple(layer_canvas(self.plan, n) for n in range(1, len(self.plan.layers) + 1))

    @cached_property
    def steps(self) -> tuple[np.ndarray, ...]:
        """(H, W) int16 palette index per pixel: the ground, then the wall after each layer.

        The same pixels as :func:`layerplan.raster.render_steps`: strokes are opaque, so a
        layer's canvas over the wall before it is the wall after it.
        """
        plan = self.plan
        steps = [np.full((plan.height_px, plan.width_px), plan.paint_index()[plan.ground], dtype=np.int16)]
        for canvas in self.canvases:
            steps.append(np.where(canvas >= 0, canvas, steps[-1]))
        return tuple(steps)

    @cached_property
    def step_pngs(self) -> tuple[bytes, ...]:
        """PNG of each of :attr:`steps`."""
        rgb = self.plan.palette_rgb()
        return tuple(png_bytes(rgb[canvas]) for canvas in self.steps)

    @cached_property
    def outlines(self) -> tuple[dict[str, Any], ...]:
        """Each layer's outline map (:func:`layerplan.outlines.layer_outlines`), traced once, drawn thrice."""
        from .outlines import layer_outlines

        return tuple(layer_outlines(self.plan, n, canvas=self.canvases[n - 1])
                     for n in range(1, len(self.plan.layers) + 1))

    @cached_property
    def print_html(self) -> str:
        """The printed plan (:func:`layerplan.report.plan_html`): plan.html, and what plan.pdf lays out."""
        from .report import plan_html

        images = {f"steps/{n:02d}": data for n, data in enumerate(self.step_pngs)}
        images["final"] = self.step_pngs[-1]
        return plan_html(self.plan, images=images, grid_mm=self.grid_mm, outlines=list(self.outlines),
                         paint_use=dict(self.paint_use), steps=list(self.steps), paper=self.paper,
                         canvases=list(self.canvases), enlargements_per_layer=self.enlargements_per_layer)


# ------------------------------------------------------------------ the exporters
def _step_pictures(x: ExportInputs) -> dict[str, bytes]:
    return {f"steps/{n:02d}.png": data for n, data in enumerate(x.step_pngs)}


def _final_picture(x: ExportInputs) -> dict[str, bytes]:
    return {"final.png": x.step_pngs[-1]}  # the wall after the last layer


def _layer_overlays(x: ExportInputs) -> dict[str, bytes]:
    from .svg import layer_svg

    return {f"steps/{n:02d}.svg": layer_svg(x.plan, n, grid_mm=x.grid_mm, outline=x.outlines[n - 1]).encode("utf-8")
            for n in range(1, len(x.plan.layers) + 1)}


def _wall_overlay(x: ExportInputs) -> dict[str, bytes]:
    from .svg import overlay_svg

    return {"overlay.svg": overlay_svg(x.plan, grid_mm=x.grid_mm, outlines=list(x.outlines)).encode("utf-8")}


def _print_plan(x: ExportInputs) -> dict[str, bytes]:
    return {"plan.html": x.print_html.encode("utf-8")}


def _print_pdf(x: ExportInputs) -> dict[str, bytes]:
    from .pdf import plan_pdf, unavailable

    if unavailable() is not None:  # no Pango here: the rest of the plan is still written (the CLI says why)
        return {}
    return {"plan.pdf": plan_pdf(x.print_html)}


def _plan_document(x: ExportInputs) -> dict[str, bytes]:
    # the file carries its quantities: a derived plan with the section, the given one untouched
    # (an existing paint_use section is replaced where it stands, a new one goes last); each
    # recipe carries its batch, the split of that paint's litres into stock paints
    from .batches import with_batches
    from .classroom import classroom_section

    # a class's paint, tables and periods go beside the quantities they are worked from
    section = classroom_section(x.plan, x.paint_use)
    written = dataclasses.replace(with_batches(x.plan, x.paint_use),
                                  extra={**x.plan.extra, "paint_use": dict(x.paint_use),
                                         **({"classroom": section} if section else {})})
    return {"plan.json": written.to_json().encode("utf-8")}


# ------------------------------------------------------------------ the registry
@dataclass(frozen=True)
class Export:
    """One kind of output file.

    Attributes
    ----------
    name : str
        Registry key.
    files : str
        The file's name relative to the plan folder, or a pattern of names where ``NN``
        stands for a two-digit step number (``steps/NN.png``).
    label : str
        What the web page calls it in its download list.
    media_type : str
        IANA media type of the file(s).
    build : callable
        ``build(inputs: ExportInputs) -> {relative name: bytes}``; returns the names
        ``files`` describes and nothing else.
    opens : bool
        The web page opens it in a new tab rather than offering it as a download.
    """

    name: str
    files: str
    label: str
    media_type: str
    build: Callable[[ExportInputs], dict[str, bytes]]
    opens: bool = False

    @property
    def per_step(self) -> bool:
        """One file per step (the ground and layers) rather than one file."""
        return "NN" in self.files

    def matches(self, file_name: str) -> bool:
        """Whether ``file_name`` (relative, ``/``-separated) is one of this export's files."""
        return re.fullmatch(re.escape(self.files).replace("NN", r"\d{2}"), file_name) is not None


#: every output, in the order the web page lists them (each file belongs to exactly one)
EXPORTS: Mapping[str, Export] = MappingProxyType({e.name: e for e in (
    Export("plan.html", "plan.html", "Print plan (open and print)", "text/html", _print_plan, opens=True),
    Export("plan.pdf", "plan.pdf", "Print plan (PDF)", "application/pdf", _print_pdf),
    Export("overlay.svg", "overlay.svg", "Wall-scale SVG overlay", "image/svg+xml", _wall_overlay),
    Export("plan.json", "plan.json", "Plan data (JSON)", "application/json", _plan_document),
    Export("final.png", "final.png", "Final picture (PNG)", "image/png", _final_picture),
    Export("step-pictures", "steps/NN.png", "The wall after each step (PNG)", "image/png", _step_pictures),
    Export("layer-overlays", "steps/NN.svg", "Each layer's strokes and outline map (SVG)", "image/svg+xml",
           _layer_overlays),
)})


def export_for(file_name: str) -> Export | None:
    """The registry entry that writes ``file_name``, or None if none does."""
    return next((e for e in EXPORTS.values() if e.matches(file_name)), None)


def build_files(plan: Plan, *, grid_mm: float | None = None, paper: str | None = None,
                enlargements_per_layer: int | None = None, **options) -> dict[str, bytes]:
    """Every output file of a plan, as relative path -> bytes (one entry of :data:`EXPORTS` each).

    ``steps/NN.png`` is the wall after layer NN (``00``: the ground); ``steps/NN.svg`` holds
    layer NN's strokes alone with its outline map and the transfer grid, for projecting; ``overlay.svg`` the whole
    plan with the transfer grid and (hidden) outline maps; ``plan.html`` the printable plan,
    ``plan.pdf`` the same laid out on pages (left out where WeasyPrint cannot run, see
    :func:`layerplan.pdf.unavailable`).
    The quantities (``options``: coverage_m2_per_litre, waste, ground_coats, stroke_coats,
    containers) are worked out once by :func:`layerplan.quantities.paint_use`, handed to the
    exporters and written as plan.json's ``paint_use`` section; ``plan`` itself is not changed.
    ``grid_mm`` is the transfer-grid square (default 500 mm, or 2 ft for walls measured in ft
    or in). ``paper`` is the paper plan.html is laid out for: a4 (default), letter, a3 or tabloid;
    ``enlargements_per_layer`` the most enlargement sheets of one layer there.

    Raises
    ------
    ValueError
        An unknown option, or a bad quantity or grid option (the message names it).
    """
    from .quantities import paint_use
    from .report import default_grid_mm
    from .svg import check_grid

    unknown = sorted(set(options) - set(QUANTITY_OPTIONS))
    if unknown:
        raise ValueError(f"unknown export option(s) {', '.join(unknown)}; valid: grid_mm, "
                         f"{', '.join(QUANTITY_OPTIONS)}, paper")
    from .sheets import DEFAULT_PAPER, PAPERS

    if paper is None:
        paper = DEFAULT_PAPER
    if paper not in PAPERS:
        raise ValueError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}")
    if grid_mm is None:
        grid_mm = default_grid_mm(plan.wall_unit, shorter_side_mm=min(plan.wall_width_mm, plan.wall_height_mm))
    grid_mm = check_grid(plan, grid_mm)
    inputs = ExportInputs(plan=plan, paint_use=MappingProxyType(paint_use(plan, **options)), grid_mm=grid_mm,
                          paper=paper, enlargements_per_layer=enlargements_per_layer)
    files: dict[str, bytes] = {}
    for export in EXPORTS.values():
        built = export.build(inputs)
        stray = sorted(name for name in built if not export.matches(name) or name in files)
        if stray:  # a registry mistake, not bad input: the registry test keeps it from shipping
            raise RuntimeError(f"export {export.name!r} wrote {', '.join(stray)}, outside {export.files!r} "
                               "or already written")
        files.update(built)
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
