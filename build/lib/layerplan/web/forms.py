"""Reading a plan request (the API's multipart form and the start page's form are the same).

Everything is checked here, before anything is queued: the photo is decoded in full, the
settings are validated and the working raster is sized, so bad input is answered at once
with a 4xx and a message, and a worker only ever sees input the planner accepts.
"""

from __future__ import annotations

import io
import math
from dataclasses import dataclass, field
from typing import Any

from PIL import Image, UnidentifiedImageError

from layerplan import units
from layerplan.load import ACCEPTED_FORMATS, ImageError, load_image
from layerplan.recipes import MAX_MIX_PAINTS, MAX_TOLERANCE_DE
from layerplan.recipes import MAX_PARTS_LIMIT as MAX_PARTS
from layerplan.svg import MAX_GRID_LINES
from layerplan.settings import (DEFAULT_BRUSHES_MM, HARD_MAX_RASTER_PX, MAX_PAINTS, MAX_WALL_MM, MIN_PAINTS,
                                MIN_RASTER_SIDE_PX, Settings, working_raster)

#: brush kits offered on the start page: our own names, widths in mm, widest first.
#: Widths follow common flat-brush sizes for wall work (4", 2", 1", 1/2" ≈ 100, 50, 25, 12 mm;
#: common practice), plus a roller-width block-in for big walls.
BRUSH_KITS: dict[str, dict[str, Any]] = {
    "gable": {"label": "Gable end — big walls, roller block-in", "brushes_mm": (150.0, 100.0, 50.0, 25.0)},
    "hall": {"label": "Hall wall — the everyday kit", "brushes_mm": DEFAULT_BRUSHES_MM},
    "panel": {"label": "Panel & board — smaller pieces, finer detail", "brushes_mm": (50.0, 25.0, 12.0, 6.0)},
    "quick": {"label": "Quick sketch — two brushes, fast plan", "brushes_mm": (100.0, 40.0)},
}
DEFAULT_KIT = "hall"
UNIT_CHOICES = ("m", "cm", "mm", "ft", "in")
#: upper bound on a seed, so it stays an ordinary integer everywhere
MAX_SEED = 2**32 - 1
#: most transfer-grid squares along the longest side (checked here, before queueing, so a too-fine
#: grid is refused at once rather than failing the plan at export)
MAX_GRID_SQUARES = MAX_GRID_LINES

#: the labels the start page shows for each form field; every message names a field by its label
LABELS: dict[str, str] = {
    "image": "Photo", "wall": "Surface", "wall_width": "Width", "wall_height": "Height", "unit": "Unit",
    "fit": "Fit", "paints": "Number of paints", "kit": "Brush kit", "brushes": "Brush widths",
    "seed": "Seed", "pixel_mm": "Pixel size (mm)", "free_palette": "Keep the photo's own colours",
    "inventory": "Paint inventory", "inventory_file": "Inventory file", "inventory_text": "Inventory text",
    "mix_paints": "Most paints per mix", "max_parts": "Max parts per mix", "tolerance": "Tolerance ΔE00",
    "stroke_cost": "Stroke cost", "coverage": "Coverage m²/L", "ground_coats": "Ground coats",
    "stroke_coats": "Stroke coats", "waste": "Waste %", "grid": "Transfer-grid spacing",
}
#: form field -> the export option it sets (layerplan.export.write_outputs)
OUTPUT_FIELDS = {"coverage": "coverage_m2_per_litre", "ground_coats": "ground_coats",
                 "stroke_coats": "stroke_coats", "waste": "waste", "grid": "grid_mm"}


def size_text(n_bytes: int) -> str:
    """A byte count as people read it (SI: 1 MB = 1,000,000 bytes)."""
    if n_bytes >= 1_000_000:
        return f"{n_bytes / 1e6:.3g} MB"
    return f"{n_bytes / 1e3:.3g} kB"


class RequestError(ValueError):
    """A request we refuse; ``status`` is the HTTP status to answer with, ``field`` the form
    field at fault (None when no one field is)."""

    def __init__(self, message: str, status: int = 400, *, field: str | None = None):
        super().__init__(message)
        self.status = status
        self.field = field


@dataclass
class PlanRequest:
    """A checked plan request, ready to store and queue."""

    image_bytes: bytes
    source_name: str
    settings: Settings
    image_shape: tuple[int, int]
    raster_px: tuple[int, int]
    mm_per_px: float
    #: TOML text of the painter's own inventory (uploaded or edited), None for the default set
    inventory_text: str | None = None
    #: options for :func:`layerplan.export.write_outputs` the request gave (the rest take their defaults)
    output_options: dict[str, float] = field(default_factory=dict)
    #: wall size in mm, the height resolved from the photo's shape when it was left blank
    wall_mm: tuple[float, float] = (0.0, 0.0)
    extra: dict[str, Any] = field(default_factory=dict)


def parse_plan_request(form, files, *, photo: tuple[bytes, str] | None = None) -> PlanRequest:
    """Check a submitted plan request.

    Parameters
    ----------
    form : mapping of str to str
        ``wall_width``, ``wall_height`` (optional: blank follows the photo), ``unit``
        (m|cm|mm|ft|in), or instead ``wall`` as ``"4x2.5m"``; ``paints``; ``brushes``
        (comma-separated mm) or ``kit`` (a key of :data:`BRUSH_KITS`); optional ``seed``,
        ``fit`` (cover|contain), ``pixel_mm``; recipe options ``mix_paints``, ``max_parts``,
        ``tolerance``, ``stroke_cost``; quantity options ``coverage``, ``ground_coats``,
        ``stroke_coats``, ``waste`` (percent), ``grid`` (a length such as ``50cm``; plain
        numbers are mm). :data:`LABELS` gives each field's label.
    files : mapping of str to FileStorage
        ``image`` (unless ``photo`` is given), ``inventory_file``.
    photo : (bytes, str), optional, keyword-only
        The photo and its original name, already read (e.g. kept from an earlier try).

    Raises
    ------
    RequestError
        415 when the upload is not an image in a format we read, 400 for everything
        else, each naming the field by its label and the bad value.
    """
    data, name = photo if photo is not None else read_photo(files)
    settings = _settings(form)
    options = _output_options(form)
    inventory_text = _inventory(form, files)
    image = _decode(data, name)
    wall_w, wall_h, s, width_px, height_px = working_raster(settings, image.shape)
    if not math.isfinite(wall_h) or wall_h > MAX_WALL_MM:
        raise RequestError(f"the height from the photo's shape would be {wall_h / 1000:g} m, over the "
                           f"{MAX_WALL_MM / 1000:g} m limit; give the Height", field="wall_height")
    if width_px * height_px > HARD_MAX_RASTER_PX:
        raise RequestError(f"working raster of {width_px}x{height_px} px is too large (at most "
                           f"{HARD_MAX_RASTER_PX / 1e6:g} megapixels); use a Pixel size (mm) coarser than {s:g} mm",
                           field="pixel_mm")
    if min(width_px, height_px) < MIN_RASTER_SIDE_PX:
        raise RequestError(f"working raster of {width_px}x{height_px} px is too small (at least "
                           f"{MIN_RASTER_SIDE_PX} px a side); use a Pixel size (mm) finer than {s:g} mm",
                           field="pixel_mm")
    grid = options.get("grid_mm")
    if grid is not None and max(wall_w, wall_h) / grid > MAX_GRID_SQUARES:
        longest = max(wall_w, wall_h)
        raise RequestError(f"{LABELS['grid']} of {grid:g} mm gives {math.ceil(longest / grid)} squares along the "
                           f"{longest / 1000:g} m side (at most {MAX_GRID_SQUARES}); use at least "
                           f"{math.ceil(longest / MAX_GRID_SQUARES):g} mm", field="grid")
    return PlanRequest(image_bytes=data, source_name=name, settings=settings, image_shape=image.shape[:2],
                       raster_px=(width_px, height_px), mm_per_px=s, inventory_text=inventory_text,
                       output_options=options, wall_mm=(float(wall_w), float(wall_h)))


# ------------------------------------------------------------------------------ the photo
def read_photo(files) -> tuple[bytes, str]:
    """The uploaded photo's bytes and its original name (only ever shown), or RequestError."""
    upload = files.get("image") if files else None
    if upload is None:
        raise RequestError("no photo: send the image file in the form field 'image'", field="image")
    data = upload.read()
    name = photo_name(upload.filename)
    if not data:
        raise RequestError("the photo is empty (0 bytes)" if name else "no photo chosen", field="image")
    return data, name


def photo_name(filename: str | None) -> str:
    """The last part of a client's file name, for display."""
    return (filename or "").replace("\\", "/").rsplit("/", 1)[-1]


def looks_like_photo(data: bytes) -> bool:
    """True when Pillow recognises ``data`` as one of the image formats we read (a cheap header check)."""
    return not _unidentified(data)


def _decode(data: bytes, name: str):
    source = io.BytesIO(data)
    if name:
        source.name = name  # only the messages use it ("image file 'x.png' is not an image")
    try:
        return load_image(source)
    except ImageError as exc:
        raise RequestError(str(exc), status=415 if _unidentified(data) else 400, field="image") from None


def _unidentified(data: bytes) -> bool:
    """True when Pillow does not recognise the data as any image format we read."""
    try:
        with Image.open(io.BytesIO(data), formats=ACCEPTED_FORMATS):
            return False
    except UnidentifiedImageError:
        return True
    except Exception:  # noqa: BLE001 - recognised but refused for another reason (bomb, damage)
        return False


# --------------------------------------------------------------------------- the inventory
INVENTORY_CHOICES = ("default", "upload", "edit")


def inventory_module():
    """:mod:`layerplan.inventory` if this build has it (mix recipes), else None."""
    try:
        from layerplan import inventory
    except ImportError:  # pragma: no cover - recipes not installed
        return None
    return inventory


def _inventory(form, files) -> str | None:
    """The painter's inventory as checked TOML text, or None for the default set."""
    choice = _text(form, "inventory") or "default"
    if choice not in INVENTORY_CHOICES:
        raise RequestError(f"inventory must be one of {', '.join(INVENTORY_CHOICES)}, got {choice!r}",
                           field="inventory")
    if choice == "default":
        return None
    module = inventory_module()
    if module is None:
        raise RequestError("this layerplan has no mix recipes, so it takes no paint inventory", field="inventory")
    if choice == "upload":
        upload = files.get("inventory_file") if files else None
        raw = upload.read(module.MAX_FILE_BYTES + 1) if upload is not None else b""
        if not raw:
            raise RequestError("inventory is 'upload' but no inventory file was sent (field 'inventory_file')",
                               field="inventory_file")
        if len(raw) > module.MAX_FILE_BYTES:
            raise RequestError(f"inventory file is too large (at most {module.MAX_FILE_BYTES} bytes)",
                               field="inventory_file")
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise RequestError(f"inventory file is not UTF-8 text (bad byte at offset {exc.start})",
                               field="inventory_file") from None
        source = "inventory file " + photo_name(upload.filename)
        where = "inventory_file"
    else:
        text = form.get("inventory_text") or ""
        if not text.strip():
            raise RequestError("inventory is 'edit' but the inventory text is empty (field 'inventory_text')",
                               field="inventory_text")
        source = "edited inventory"
        where = "inventory_text"
    try:
        module.loads_inventory(text, source=source.strip())
    except ValueError as exc:
        raise RequestError(str(exc), field=where) from None
    return text


# ---------------------------------------------------------------------------- the settings
def _settings(form) -> Settings:
    wall_w, wall_h, unit = _wall(form)
    kw: dict[str, Any] = {"wall_width_mm": wall_w, "wall_height_mm": wall_h, "wall_unit": unit,
                          "brushes_mm": _brushes(form)}
    paints = _text(form, "paints")
    if paints:
        kw["paints"] = _int("paints", paints, MIN_PAINTS, MAX_PAINTS)
    fit = _text(form, "fit")
    if fit:
        if fit not in ("cover", "contain"):
            raise RequestError(f"Fit must be one of cover, contain, got {fit!r}", field="fit")
        kw["fit"] = fit
    seed = _text(form, "seed")
    if seed:
        kw["seed"] = _int("seed", seed, 0, MAX_SEED)
    if _text(form, "free_palette") in ("1", "on", "true", "yes"):
        kw["free_palette"] = True
    pixel = _text(form, "pixel_mm")
    if pixel:
        kw["mm_per_px"] = _number("pixel_mm", pixel, minimum=0.0, strict=True)
    for name, key in (("mix_paints", "mix_paints"), ("max_parts", "max_parts")):
        text = _text(form, name)
        if text:
            kw[key] = _int(name, text, 1, MAX_MIX_PAINTS if name == "mix_paints" else MAX_PARTS)
    text = _text(form, "tolerance")
    if text:
        kw["tolerance_de"] = _number("tolerance", text, minimum=0.0, maximum=MAX_TOLERANCE_DE)
    text = _text(form, "stroke_cost")
    if text:
        kw["stroke_cost"] = _number("stroke_cost", text, minimum=0.0)
    try:
        return Settings(**kw).validated()
    except ValueError as exc:  # every field was checked above; this is a backstop
        raise RequestError(str(exc)) from None


def _output_options(form) -> dict[str, float]:
    """The quantity and grid options given, as :func:`layerplan.export.write_outputs` takes them."""
    options: dict[str, float] = {}
    text = _text(form, "coverage")
    if text:
        options["coverage_m2_per_litre"] = _number("coverage", text, minimum=0.0, strict=True)
    for name, least in (("ground_coats", 0), ("stroke_coats", 1)):
        text = _text(form, name)
        if text:
            options[name] = _int(name, text, least, None)
    text = _text(form, "waste")
    if text:
        percent = _number("waste", text[:-1].strip() if text.endswith("%") else text, minimum=0.0, maximum=100.0,
                          shown=text)
        options["waste"] = percent / 100.0
    text = _text(form, "grid")
    if text:
        options["grid_mm"] = _grid(text)
    return options


def _grid(text: str) -> float:
    label = LABELS["grid"]
    try:
        value = float(text)  # a plain number is mm, as on the command line
        mm = value
    except ValueError:
        try:
            mm, second, _ = units.parse_wall(text)
            if second is not None:
                raise ValueError("one length, not two")
        except ValueError:
            raise RequestError(f"{label} must be a length such as 50cm or 2ft (plain numbers are mm), "
                               f"got {text!r}", field="grid") from None
    if not math.isfinite(mm) or mm <= 0:
        raise RequestError(f"{label} must be > 0, got {text!r}", field="grid")
    return float(mm)


def _wall(form) -> tuple[float, float | None, str]:
    combined = _text(form, "wall")
    if combined and not _text(form, "wall_width"):
        try:
            return units.parse_wall(combined)
        except ValueError as exc:
            raise RequestError(f"Surface: {exc}", field="wall") from None
    unit = _text(form, "unit") or "m"
    if unit.lower() not in units.UNIT_ALIASES:
        raise RequestError(f"Unit must be one of {', '.join(UNIT_CHOICES)}, got {unit!r}", field="unit")
    unit = units.UNIT_ALIASES[unit.lower()]
    width_text = _text(form, "wall_width")
    if not width_text:
        raise RequestError("give the Width of the surface (field 'wall_width')", field="wall_width")
    width = _length("wall_width", width_text, unit)
    height_text = _text(form, "wall_height")
    height = _length("wall_height", height_text, unit) if height_text else None
    return width, height, unit


def _length(name: str, text: str, unit: str) -> float:
    value = _number(name, text)
    if value <= 0:
        raise RequestError(f"{LABELS[name]} must be > 0, got {text} {unit}", field=name)
    mm = units.to_mm(value, unit)
    if mm > MAX_WALL_MM:
        raise RequestError(f"{LABELS[name]} must be at most {MAX_WALL_MM / 1000:g} m, got {text} {unit}", field=name)
    return mm


def _brushes(form) -> tuple[float, ...]:
    text = _text(form, "brushes")
    if text:
        try:
            brushes = units.parse_brushes(text)
            Settings(brushes_mm=brushes).validated()  # count, range and repeats, before anything else
        except ValueError as exc:
            raise RequestError(f"{LABELS['brushes']}: {exc}", field="brushes") from None
        return brushes
    kit = _text(form, "kit") or DEFAULT_KIT
    if kit not in BRUSH_KITS:
        raise RequestError(f"{LABELS['kit']} must be one of {', '.join(BRUSH_KITS)}, got {kit!r}", field="kit")
    return tuple(BRUSH_KITS[kit]["brushes_mm"])


def _text(form, name: str) -> str:
    value = form.get(name) if form else None
    return value.strip() if isinstance(value, str) else ""


def _number(name: str, text: str, *, minimum: float | None = None, maximum: float | None = None,
            strict: bool = False, shown: str | None = None) -> float:
    """``text`` as a finite number within the bounds; RequestError naming the field by its label."""
    label, shown = LABELS.get(name, name), text if shown is None else shown
    try:
        value = float(text)
    except ValueError:
        raise RequestError(f"{label} must be a number, got {shown!r}", field=name) from None
    if not math.isfinite(value):
        raise RequestError(f"{label} must be a finite number, got {shown!r}", field=name)
    low = minimum is not None and (value <= minimum if strict else value < minimum)
    if low or (maximum is not None and value > maximum):
        if maximum is None:
            rule = f"{'>' if strict else '>='} {minimum:g}"
        else:
            rule = f"from {minimum:g} to {maximum:g}"
        raise RequestError(f"{label} must be {rule}, got {shown}", field=name)
    return value


def _int(name: str, text: str, least: int, most: int | None) -> int:
    """``text`` as a whole number from ``least`` to ``most`` (None: no upper bound)."""
    label = LABELS.get(name, name)
    rule = f"a whole number from {least} to {most}" if most is not None else f"a whole number >= {least}"
    try:
        value = int(text)
    except ValueError:
        raise RequestError(f"{label} must be {rule}, got {text!r}", field=name) from None
    if value < least or (most is not None and value > most):
        raise RequestError(f"{label} must be {rule}, got {value}", field=name)
    return value
