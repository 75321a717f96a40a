"""Write a Plan's outputs: plan.json, final.png, steps/NN.png, steps/NN.svg, overlay.svg, plan.html, plan.pdf.

Exporters read a `Plan` and nothing else, and never write into it: figures derived from
the plan (the paint use, the wall after each layer, the outline maps) are worked out once
in :class:`ExportInputs` and handed to every exporter. The exports are named in one
registry, :data:`EXPORTS` (name -> :class:`Export`: builder, label, media type, file
names); :func:`build_files` runs it and the web page's download list reads it, so a new
export is one entry there.

Everything is written into a hidden partial folder and moved into place at the end, so a
failed run never leaves a plan that looks finished; files a plan did not write are never
touched (:func:`check_destination`, :func:`write_outputs`).
"""

from __future__ import annotations

import dataclasses
import io
import os
import re
import shutil
import tempfile
import time
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
    """Encode an (H, W, 3) uint8 image, or (H, W, 4) with alpha, as PNG (deterministic bytes)."""
    buf = io.BytesIO()
    mode = "RGBA" if rgb.shape[-1] == 4 else "RGB"
    Image.fromarray(np.ascontiguousarray(rgb, dtype=np.uint8), mode).save(buf, format="PNG", optimize=False)
    return buf.getvalue()


#: options of :func:`build_files` / :func:`write_outputs` for quantities (see layerplan.quantities.paint_use)
QUANTITY_OPTIONS = ("coverage_m2_per_litre", "waste", "ground_coats", "stroke_coats", "containers")
#: options of :func:`build_files` / :func:`write_outputs` for the work schedule (layerplan.schedule.work_schedule)
SCHEDULE_OPTIONS = ("crew", "hours_per_day", "drying_hours", "labour_rate")


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
    schedule : mapping, optional
        :func:`layerplan.schedule.work_schedule` of the plan and its paint use: plan.json's ``schedule``
        section and the printed plan's day-by-day sheet (none without it).
    site : (photo, corners), optional
        A photo of the wall and its four corners in it, for the mock-ups (:mod:`layerplan.mockup`).
    panels : tuple of layerplan.panels.Panel
        Panels painted off the wall (none: no panels.html); ``panel_overlap_mm`` their overlap.
    """

    plan: Plan
    paint_use: Mapping[str, Any]
    grid_mm: float
    paper: str = "a4"
    enlargements_per_layer: int | None = None
    schedule: Mapping[str, Any] | None = None
    #: a photo of the site, ``(H, W, 3)`` uint8, and the wall's corners in it ((4, 2)): see layerplan.mockup
    site: tuple[np.ndarray, np.ndarray] | None = None
    #: the panels the design is split into, and their overlap, mm (layerplan.panels); empty: none
    panels: tuple = ()
    panel_overlap_mm: float = 0.0

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
        """PNG of each of :attr:`steps` (openings transparent: :func:`layerplan.raster.picture`)."""
        from .raster import picture

        return tuple(png_bytes(picture(self.plan, canvas)) for canvas in self.steps)

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
                         canvases=list(self.canvases), enlargements_per_layer=self.enlargements_per_layer,
                         schedule=None if self.schedule is None else dict(self.schedule))


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

    # the schedule and a class's paint, tables and periods likewise: worked out once from the plan and its
    # paint use, written beside the quantities they are worked from
    section = classroom_section(x.plan, x.paint_use)
    written = dataclasses.replace(with_batches(x.plan, x.paint_use),
                                  extra={**x.plan.extra, "paint_use": dict(x.paint_use),
                                         **({"schedule": dict(x.schedule)} if x.schedule is not None else {}),
                                         **({"classroom": section} if section else {})})
    return {"plan.json": written.to_json().encode("utf-8")}


def _site_mockup(x: ExportInputs) -> dict[str, bytes]:
    if x.site is None:
        return {}
    from .mockup import mockup
    from .raster import picture

    photo, corners = x.site
    return {"mockup.png": png_bytes(mockup(picture(x.plan, x.steps[-1]), photo, corners))}


def _step_mockups(x: ExportInputs) -> dict[str, bytes]:
    if x.site is None:
        return {}
    from .mockup import mockup
    from .raster import picture

    photo, corners = x.site
    return {f"mockups/{n:02d}.png": png_bytes(mockup(picture(x.plan, canvas), photo, corners))
            for n, canvas in enumerate(x.steps)}


def _panel_sheets(x: ExportInputs) -> dict[str, bytes]:
    if not x.panels:
        return {}
    from .panels import panels_html
    from .sheets import panel_sheets

    doc = panel_sheets(x.plan, x.steps[-1], x.panels, x.panel_overlap_mm, grid_mm=x.grid_mm, paper=x.paper)
    return {"panels.html": panels_html(doc).encode("utf-8")}


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
    Export("panels.html", "panels.html", "Panels: key map and one sheet each (open and print)", "text/html",
           _panel_sheets, opens=True),
    Export("mockup.png", "mockup.png", "The plan on the site photo (PNG)", "image/png", _site_mockup),
    Export("step-mockups", "mockups/NN.png", "Each step on the site photo (PNG)", "image/png", _step_mockups),
)})


def export_for(file_name: str) -> Export | None:
    """The registry entry that writes ``file_name``, or None if none does."""
    return next((e for e in EXPORTS.values() if e.matches(file_name)), None)


def build_files(plan: Plan, *, grid_mm: float | None = None, paper: str | None = None,
                enlargements_per_layer: int | None = None, site_photo=None, site_corners=None,
                panels_mm=None, panel_overlap_mm: float | None = None, **options) -> dict[str, bytes]:
    """Every output file of a plan, as relative path -> bytes (one entry of :data:`EXPORTS` each).

    ``steps/NN.png`` is the wall after layer NN (``00``: the ground); ``steps/NN.svg`` holds
    layer NN's strokes alone with its outline map and the transfer grid, for projecting; ``overlay.svg`` the whole
    plan with the transfer grid and (hidden) outline maps; ``plan.html`` the printable plan,
    ``plan.pdf`` the same laid out on pages (left out where WeasyPrint cannot run, see
    :func:`layerplan.pdf.unavailable`).
    The quantities (``options``: coverage_m2_per_litre, waste, ground_coats, stroke_coats,
    containers) are worked out once by :func:`layerplan.quantities.paint_use`, handed to the
    exporters and written as plan.json's ``paint_use`` section; the work schedule (``options``:
    crew, hours_per_day, drying_hours, labour_rate) likewise by
    :func:`layerplan.schedule.work_schedule`, as ``schedule``; ``plan`` itself is not changed.
    ``grid_mm`` is the transfer-grid square (default 500 mm, or 2 ft for walls measured in ft
    or in). ``paper`` is the paper plan.html is laid out for: a4 (default), letter, a3 or tabloid;
    ``enlargements_per_layer`` the most enlargement sheets of one layer there. ``site_photo`` (a
    path, bytes or an (H, W, 3) uint8 array) with ``site_corners`` (8 numbers or (4, 2): the wall's
    corners in it) adds ``mockup.png`` and ``mockups/NN.png`` (:mod:`layerplan.mockup`). ``panels_mm``
    (width, height) with ``panel_overlap_mm`` (default 50) adds ``panels.html`` (:mod:`layerplan.panels`).

    Raises
    ------
    ValueError
        An unknown option, or a bad quantity or grid option (the message names it).
    """
    from .quantities import paint_use
    from .report import default_grid_mm
    from .svg import check_grid

    unknown = sorted(set(options) - set(QUANTITY_OPTIONS) - set(SCHEDULE_OPTIONS))
    if unknown:
        raise ValueError(f"unknown export option(s) {', '.join(unknown)}; valid: grid_mm, "
                         f"{', '.join(QUANTITY_OPTIONS + SCHEDULE_OPTIONS)}, paper")
    timing = {k: options.pop(k) for k in SCHEDULE_OPTIONS if k in options and options[k] is not None}
    options = {k: v for k, v in options.items() if k not in SCHEDULE_OPTIONS}
    from .sheets import DEFAULT_PAPER, PAPERS

    if paper is None:
        paper = DEFAULT_PAPER
    if paper not in PAPERS:
        raise ValueError(f"paper must be one of {', '.join(PAPERS)}, got {paper!r}")
    if grid_mm is None:
        grid_mm = default_grid_mm(plan.wall_unit, shorter_side_mm=min(plan.wall_width_mm, plan.wall_height_mm))
    grid_mm = check_grid(plan, grid_mm)
    from .schedule import check_options as check_schedule, work_schedule

    check_schedule(**timing)
    site = check_site(site_photo, site_corners)
    panels, overlap = (), 0.0
    if panels_mm is not None:
        from .options import PANEL_OVERLAP_MM
        from .panels import panel_layout

        overlap = PANEL_OVERLAP_MM if panel_overlap_mm is None else float(panel_overlap_mm)
        panels = panel_layout((plan.wall_width_mm, plan.wall_height_mm), tuple(panels_mm), overlap)
    use = paint_use(plan, **options)
    inputs = ExportInputs(plan=plan, paint_use=MappingProxyType(use), grid_mm=grid_mm,
                          paper=paper, enlargements_per_layer=enlargements_per_layer,
                          schedule=MappingProxyType(work_schedule(plan, use, **timing)), site=site,
                          panels=panels, panel_overlap_mm=overlap)
    files: dict[str, bytes] = {}
    for export in EXPORTS.values():
        built = export.build(inputs)
        stray = sorted(name for name in built if not export.matches(name) or name in files)
        if stray:  # a registry mistake, not bad input: the registry test keeps it from shipping
            raise RuntimeError(f"export {export.name!r} wrote {', '.join(stray)}, outside {export.files!r} "
                               "or already written")
        files.update(built)
    return files


def check_site(site_photo, site_corners) -> tuple[np.ndarray, np.ndarray] | None:
    """The site photo (read when it is a path or bytes) and its corners, checked; None when neither is given.

    Raises
    ------
    ValueError
        One given without the other, a photo that cannot be read, or bad corners (the message says which).
    """
    if site_photo is None and site_corners is None:
        return None
    if site_photo is None or site_corners is None:
        raise ValueError("a site photo needs its corners and the corners a site photo: give --site-photo with "
                         "--corners x1,y1,...,x4,y4")
    from .load import load_image
    from .mockup import check_corners

    photo = site_photo if isinstance(site_photo, np.ndarray) else load_image(site_photo)
    return photo, check_corners(site_corners, photo.shape)


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


#: hidden folders a plan is written into before it is moved into place: ``.NAME.partial-PID-xxxx``
#: beside a new folder, ``.layerplan.partial-PID-xxxx`` inside an existing one (``.NAME.old-PID``
#: and a partial without a process id: left by older versions)
_PARTIAL_RE = re.compile(r"^\.(?P<name>.+)\.(?:partial|old)-(?:(?P<pid>\d+)(?:-|$))?")
_INSIDE = "layerplan"
#: a partial folder of no known process is taken as abandoned after this long, s
_ABANDONED_S = 3600.0


def _plan_file(rel: str) -> bool:
    """Whether a plan writes the file ``rel`` (relative, ``/``-separated): safe to replace."""
    return export_for(rel) is not None


def _foreign(folder: Path, *, keep: Path | None = None) -> list[str]:
    """The entries of ``folder`` a plan did not write (``keep``, the photo, aside), relative names."""
    found = []
    for entry in sorted(folder.iterdir()):
        rel = entry.name
        if keep is not None and entry == keep:
            continue
        if _PARTIAL_RE.match(rel):
            continue  # a partial plan of ours
        if entry.is_dir() and not entry.is_symlink() and rel == "steps":
            found += [f"steps/{e.name}" for e in sorted(entry.iterdir()) if not _plan_file(f"steps/{e.name}")
                      or not e.is_file()]
        elif not (entry.is_file() and _plan_file(rel)):
            found.append(rel + ("/" if entry.is_dir() else ""))
    return found


def _listed(names: list[str]) -> str:
    shown = ", ".join(names[:3])
    return shown + (f" and {len(names) - 3} more" if len(names) > 3 else "")


def _probe_writable(folder: Path) -> None:
    """Make and remove a hidden folder in ``folder``: the one sure test of being able to write there."""
    try:
        probe = tempfile.mkdtemp(prefix=".layerplan-probe-", dir=folder)
    except OSError as exc:
        raise ValueError(f"cannot write into {folder}: {exc.strerror or exc}") from None
    os.rmdir(probe)


def check_destination(out_dir, *, photo=None) -> Path:
    """Check that a plan may be written to ``out_dir``; call it before the long work.

    The folder may be new, empty, or an earlier plan (its other files are kept); the
    photo's own folder only when it holds nothing else; and it must be writable (a hidden
    folder is made and removed to find out).

    Parameters
    ----------
    out_dir : path
    photo : path, optional, keyword-only
        The photo being planned, which may sit in ``out_dir``.

    Returns
    -------
    Path
        ``out_dir`` made absolute (``.`` and ``..`` resolved to the folders they name).

    Raises
    ------
    ValueError
        A file; a folder holding other files and no plan; the photo's folder holding
        other files; the root folder; or a folder that cannot be written.
    """
    if not str(out_dir).strip():
        raise ValueError("give the folder to write the plan into")
    out = Path(os.path.abspath(os.fspath(out_dir)))
    if not out.name:
        raise ValueError(f"{out} is the root folder; give a folder for the plan, e.g. {out / 'plan'}")
    if out.is_symlink() and not out.exists():
        raise ValueError(f"{out} is a link to nothing; give a folder for the plan")
    if out.exists():
        if not out.is_dir():
            raise ValueError(f"output {out} exists and is not a folder")
        keep = None
        if photo is not None:
            photo_path = Path(os.path.abspath(os.fspath(photo)))
            if photo_path.parent.exists() and photo_path.parent.samefile(out):
                keep = out / photo_path.name
                if _plan_file(photo_path.name):
                    raise ValueError(f"{out} holds the photo {photo_path.name}, a name the plan writes; give "
                                     f"another folder, e.g. {out / 'plan'}")
        others = _foreign(out, keep=keep)
        if others and keep is not None:
            raise ValueError(f"output folder {out} is the photo's own folder and holds other files ({_listed(others)}); give "
                             f"a new folder, e.g. {out / 'plan'}")
        if others and not (out / _MARKER).is_file():
            raise ValueError(f"output folder {out} is not empty and holds no plan ({_listed(others)}); refusing to "
                             f"overwrite it: give a new or empty folder")
        _probe_writable(out)
    else:
        base = out.parent
        while not base.exists():
            base = base.parent
        if not base.is_dir():
            raise ValueError(f"cannot make {out}: {base} is a file")
        _probe_writable(base)
    return out


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # another user's process: alive
        return True
    return True


def clean_partials(folder, name: str) -> list[Path]:
    """Remove the partial folders an interrupted run left for ``name`` in ``folder``.

    A partial folder is removed when the process that made it is gone (or, for one without
    a process id, after an hour), and only if it holds nothing but files a plan writes.

    Returns
    -------
    list of Path
        The folders removed.
    """
    removed = []
    folder = Path(folder)
    try:
        entries = list(folder.iterdir())
    except OSError:
        return removed
    for entry in entries:
        m = _PARTIAL_RE.match(entry.name)
        if m is None or m.group("name") != name or not entry.is_dir() or entry.is_symlink():
            continue
        pid = m.group("pid")
        if pid is not None and (int(pid) == os.getpid() or _alive(int(pid))):
            continue
        try:
            if pid is None and time.time() - entry.stat().st_mtime < _ABANDONED_S:
                continue
            files = [p for p in entry.rglob("*") if not p.is_dir()]
        except OSError:
            continue
        if all(p.is_file() and not p.is_symlink() and _plan_file(p.relative_to(entry).as_posix()) for p in files):
            shutil.rmtree(entry, ignore_errors=True)
            removed.append(entry)
    return removed


def write_outputs(plan: Plan, out_dir, *, photo=None, **options) -> Path:
    """Write all outputs of ``plan`` into ``out_dir``.

    Every file is first written into a hidden partial folder; then a new folder is renamed
    into place at once, or, for an existing folder, the earlier plan.json is removed, the
    files are moved in and plan.json comes last, so a folder without it never looks
    finished. Files a plan does not write are never touched; partial folders an
    interrupted run left are removed (:func:`clean_partials`).

    Parameters
    ----------
    plan : Plan
    out_dir : path
        Created if missing. An existing folder must be empty or hold an earlier plan
        (see :func:`check_destination`).
    photo : path, optional, keyword-only
        The photo planned, which may sit in ``out_dir`` (its own folder) and is kept.
    **options
        ``grid_mm`` and the quantity options, passed to :func:`build_files`.

    Returns
    -------
    Path of the folder written (absolute).

    Raises
    ------
    ValueError
        If ``out_dir`` cannot take a plan (see :func:`check_destination`); or a bad option.
    """
    out = check_destination(out_dir, photo=photo)
    files = build_files(plan, **options)
    if out.exists():
        clean_partials(out, _INSIDE)
        _write_into(out, files)
    else:
        out.parent.mkdir(parents=True, exist_ok=True)
        clean_partials(out.parent, out.name)
        _write_new(out, files)
    return out


def _write_files(tmp: Path, files: Mapping[str, bytes]) -> None:
    for rel in files:
        path = tmp / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(files[rel])


def _write_new(out: Path, files: Mapping[str, bytes]) -> None:
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-{os.getpid()}-", dir=out.parent))
    try:
        _write_files(tmp, files)
        # mkdtemp makes the folder 0700; a finished plan gets the usual mode for a new folder
        tmp.chmod(_folder_mode(tmp))
        os.replace(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def _write_into(out: Path, files: Mapping[str, bytes]) -> None:
    # the partial folder inside the destination: moving out of it never crosses a file system
    tmp = Path(tempfile.mkdtemp(prefix=f".{_INSIDE}.partial-{os.getpid()}-", dir=out))
    try:
        _write_files(tmp, files)
        marker = out / _MARKER
        if marker.is_file():
            marker.unlink()  # from here until the end the folder does not look finished
        for rel in sorted(files):
            if rel != _MARKER:
                (out / rel).parent.mkdir(parents=True, exist_ok=True)
                os.replace(tmp / rel, out / rel)
        earlier = [*out.iterdir(), *((out / "steps").iterdir() if (out / "steps").is_dir() else ())]
        for old in [p for p in earlier if p.is_file() and not p.is_symlink()]:
            rel = old.relative_to(out).as_posix()
            if rel not in files and _plan_file(rel):  # an earlier plan's file this one does not have
                old.unlink()
        os.replace(tmp / _MARKER, marker)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
