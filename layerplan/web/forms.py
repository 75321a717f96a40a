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
from layerplan.settings import (DEFAULT_BRUSHES_MM, HARD_MAX_RASTER_PX, MAX_WALL_MM, Settings,
                                choose_mm_per_px, raster_size)

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
#: the working raster must be at least this many pixels on each side (as the planner requires)
MIN_RASTER_SIDE_PX = 8
#: upper bound on a seed, so it stays an ordinary integer everywhere
MAX_SEED = 2**32 - 1


def size_text(n_bytes: int) -> str:
    """A byte count as people read it (SI: 1 MB = 1,000,000 bytes)."""
    if n_bytes >= 1_000_000:
        return f"{n_bytes / 1e6:.3g} MB"
    return f"{n_bytes / 1e3:.3g} kB"


class RequestError(ValueError):
    """A request we refuse; ``status`` is the HTTP status to answer with."""

    def __init__(self, message: str, status: int = 400):
        super().__init__(message)
        self.status = status


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
    extra: dict[str, Any] = field(default_factory=dict)


def parse_plan_request(form, files) -> PlanRequest:
    """Check a submitted plan request.

    Parameters
    ----------
    form : mapping of str to str
        ``wall_width``, ``wall_height`` (optional: blank follows the photo), ``unit``
        (m|cm|mm|ft|in), or instead ``wall`` as ``"4x2.5m"``; ``paints``; ``brushes``
        (comma-separated mm) or ``kit`` (a key of :data:`BRUSH_KITS`); optional ``seed``,
        ``fit`` (cover|contain), ``pixel_mm``.
    files : mapping of str to FileStorage
        ``image``.

    Raises
    ------
    RequestError
        415 when the upload is not an image in a format we read, 400 for everything
        else, each naming the field and the bad value.
    """
    data, name = _image_upload(files)
    settings = _settings(form)
    inventory_text = _inventory(form, files)
    image = _decode(data, name)
    h, w = image.shape[:2]
    wall_w = settings.wall_width_mm
    wall_h = settings.wall_height_mm if settings.wall_height_mm is not None else wall_w * h / w
    if not math.isfinite(wall_h) or wall_h > MAX_WALL_MM:
        raise RequestError(f"wall height from the photo's shape would be {wall_h / 1000:g} m, over the "
                           f"{MAX_WALL_MM / 1000:g} m limit; give the height")
    s = settings.mm_per_px or choose_mm_per_px(wall_w, wall_h, min(settings.brushes_mm))
    width_px, height_px = raster_size(wall_w, wall_h, s)
    if width_px * height_px > HARD_MAX_RASTER_PX:
        raise RequestError(f"working raster of {width_px}x{height_px} px is too large (at most "
                           f"{HARD_MAX_RASTER_PX / 1e6:g} megapixels); use a pixel size coarser than {s:g} mm")
    if min(width_px, height_px) < MIN_RASTER_SIDE_PX:
        raise RequestError(f"working raster of {width_px}x{height_px} px is too small (at least "
                           f"{MIN_RASTER_SIDE_PX} px a side); use a pixel size finer than {s:g} mm")
    return PlanRequest(image_bytes=data, source_name=name, settings=settings, image_shape=(h, w),
                       raster_px=(width_px, height_px), mm_per_px=s, inventory_text=inventory_text)


# ------------------------------------------------------------------------------ the photo
def _image_upload(files) -> tuple[bytes, str]:
    upload = files.get("image") if files else None
    if upload is None:
        raise RequestError("no photo: send the image file in the form field 'image'")
    data = upload.read()
    name = (upload.filename or "").replace("\\", "/").rsplit("/", 1)[-1]
    if not data:
        raise RequestError("the photo is empty (0 bytes)" if name else "no photo chosen")
    return data, name


def _decode(data: bytes, name: str):
    source = io.BytesIO(data)
    if name:
        source.name = name  # only the messages use it ("image file 'x.png' is not an image")
    try:
        return load_image(source)
    except ImageError as exc:
        raise RequestError(str(exc), status=415 if _unidentified(data) else 400) from None


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
        raise RequestError(f"inventory must be one of {', '.join(INVENTORY_CHOICES)}, got {choice!r}")
    if choice == "default":
        return None
    module = inventory_module()
    if module is None:
        raise RequestError("this layerplan has no mix recipes, so it takes no paint inventory")
    if choice == "upload":
        upload = files.get("inventory_file") if files else None
        raw = upload.read(module.MAX_FILE_BYTES + 1) if upload is not None else b""
        if not raw:
            raise RequestError("inventory is 'upload' but no inventory file was sent (field 'inventory_file')")
        if len(raw) > module.MAX_FILE_BYTES:
            raise RequestError(f"inventory file is too large (at most {module.MAX_FILE_BYTES} bytes)")
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise RequestError(f"inventory file is not UTF-8 text (bad byte at offset {exc.start})") from None
        source = "inventory file " + (upload.filename or "").replace("\\", "/").rsplit("/", 1)[-1]
    else:
        text = form.get("inventory_text") or ""
        if not text.strip():
            raise RequestError("inventory is 'edit' but the inventory text is empty (field 'inventory_text')")
        source = "edited inventory"
    try:
        module.loads_inventory(text, source=source.strip())
    except ValueError as exc:
        raise RequestError(str(exc)) from None
    return text


# ---------------------------------------------------------------------------- the settings
def _settings(form) -> Settings:
    wall_w, wall_h, unit = _wall(form)
    kw: dict[str, Any] = {"wall_width_mm": wall_w, "wall_height_mm": wall_h, "wall_unit": unit,
                          "brushes_mm": _brushes(form)}
    paints = _text(form, "paints")
    if paints:
        kw["paints"] = _int("paints", paints)
    fit = _text(form, "fit")
    if fit:
        kw["fit"] = fit
    seed = _text(form, "seed")
    if seed:
        kw["seed"] = _int("seed", seed)
        if kw["seed"] > MAX_SEED:
            raise RequestError(f"seed must be at most {MAX_SEED}, got {seed}")
    if _text(form, "free_palette") in ("1", "on", "true", "yes"):
        kw["free_palette"] = True
    pixel = _text(form, "pixel_mm")
    if pixel:
        kw["mm_per_px"] = _number("pixel_mm", pixel)
    try:
        return Settings(**kw).validated()
    except ValueError as exc:
        raise RequestError(str(exc)) from None


def _wall(form) -> tuple[float, float | None, str]:
    combined = _text(form, "wall")
    if combined and not _text(form, "wall_width"):
        try:
            return units.parse_wall(combined)
        except ValueError as exc:
            raise RequestError(str(exc)) from None
    unit = _text(form, "unit") or "m"
    if unit.lower() not in units.UNIT_ALIASES:
        raise RequestError(f"unknown unit {unit!r}; valid units: {', '.join(UNIT_CHOICES)}")
    unit = units.UNIT_ALIASES[unit.lower()]
    width_text = _text(form, "wall_width")
    if not width_text:
        raise RequestError("give the wall width (field 'wall_width')")
    width = _length("wall_width", width_text, unit)
    height_text = _text(form, "wall_height")
    height = _length("wall_height", height_text, unit) if height_text else None
    return width, height, unit


def _length(name: str, text: str, unit: str) -> float:
    value = _number(name, text)
    if value <= 0:
        raise RequestError(f"{name} must be > 0, got {text} {unit}")
    mm = units.to_mm(value, unit)
    if mm > MAX_WALL_MM:
        raise RequestError(f"{name} must be at most {MAX_WALL_MM / 1000:g} m, got {text} {unit}")
    return mm


def _brushes(form) -> tuple[float, ...]:
    text = _text(form, "brushes")
    if text:
        try:
            return units.parse_brushes(text)
        except ValueError as exc:
            raise RequestError(str(exc)) from None
    kit = _text(form, "kit") or DEFAULT_KIT
    if kit not in BRUSH_KITS:
        raise RequestError(f"unknown brush kit {kit!r}; kits: {', '.join(BRUSH_KITS)}")
    return tuple(BRUSH_KITS[kit]["brushes_mm"])


def _text(form, name: str) -> str:
    value = form.get(name) if form else None
    return value.strip() if isinstance(value, str) else ""


def _number(name: str, text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise RequestError(f"{name} must be a number, got {text!r}") from None
    if not math.isfinite(value):
        raise RequestError(f"{name} must be a finite number, got {text!r}")
    return value


def _int(name: str, text: str) -> int:
    try:
        return int(text)
    except ValueError:
        raise RequestError(f"{name} must be a whole number, got {text!r}") from None
