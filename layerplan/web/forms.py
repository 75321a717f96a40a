"""Reading a plan request (the API's multipart form and the start page's form are the same).

Everything is checked here, before anything is queued: the photo is decoded in full, the
options are read by their own parsers (:mod:`layerplan.options`, as the command line reads
them) and checked together against the photo, so bad input is answered at once with a 4xx
and a message naming the field, and a worker only ever sees input the planner accepts.
"""

from __future__ import annotations

import contextlib
import io
import math
import re
from dataclasses import dataclass, field
from typing import Any

from PIL import Image, UnidentifiedImageError

from layerplan import options, units
from layerplan.load import ACCEPTED_FORMATS, DEFAULT_MAX_PIXELS, ImageError, load_image
from layerplan.options import OPTIONS, OptionError
# the start page reads these limits from here (layerplan/web/pages.py)
from layerplan.options import MAX_MIX_PAINTS, MAX_PARTS, MAX_SEED, MAX_TOLERANCE_DE  # noqa: F401
from layerplan.settings import DEFAULT_BRUSHES_MM, DEFAULT_WALL_WIDTH_MM, Settings
from layerplan.surfaces import SURFACES

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
UNIT_CHOICES = ("m", "cm", "mm", "ft", "in")  # in the order the start page offers them
#: the labels the start page shows for each form field; every message names a field by its label.
#: The options' labels come from layerplan.options; these fields are the form's own (the wall in
#: three parts, the brush kit, the photo and the inventory upload)
LABELS: dict[str, str] = {
    "image": "Photo", "wall_width": "Width", "wall_height": "Height", "unit": "Unit", "kit": "Brush kit",
    "inventory": "Paint inventory", "inventory_file": "Inventory file", "inventory_text": "Inventory text",
    **{o.field: o.label for o in options.form_options()},
}
#: form field -> the export option it sets (layerplan.export.write_outputs)
OUTPUT_FIELDS = {o.field: o.setting for o in options.form_options("output")}
#: the classroom options the start page offers with the surface (made from the option spec), their
#: defaults as the form holds them, and our labels for their choices
CLASSROOM_OPTIONS = tuple(o for o in options.form_options() if o.name in (
    "surface", "students", "spares", "period_minutes", "paint_set", "simple_mixes", "value_study"))
CLASSROOM_DEFAULTS = {o.field: options.form_defaults()[o.field] for o in CLASSROOM_OPTIONS}
CHOICE_LABELS: dict[str, str] = {
    **{key: s.label for key, s in SURFACES.items()},
    "basic": "Basic acrylic set", "classroom": "Classroom set (red, yellow, blue, black, white)",
}


def size_text(n_bytes: int) -> str:
    """A byte count as people read it (SI: 1 MB = 1,000,000 bytes)."""
    if n_bytes >= 1_000_000:
        return f"{n_bytes / 1e6:.3g} MB"
    return f"{n_bytes / 1e3:.3g} kB"


#: a run of characters this long in a message is someone's input: it is cut short
LONGEST_SHOWN = 40
_LONG_RUN = re.compile(r"\S{%d,}" % (LONGEST_SHOWN + 1))


def clip(message: str, *, longest: int = LONGEST_SHOWN, total: int = 600) -> str:
    """``message`` with any run of more than ``longest`` non-space characters cut to its start and its
    length (``'1234567…' (100,000 characters)``), and the whole kept under ``total`` characters: a refusal
    names the bad value without sending kilobytes of it back."""
    def cut(m: re.Match) -> str:
        run = m.group(0)
        return f"{run[:longest // 2]}… ({len(run):,} characters)"

    message = _LONG_RUN.sub(cut, str(message))
    return message if len(message) <= total else message[:total - 1] + "…"


class RequestError(ValueError):
    """A request we refuse; ``status`` is the HTTP status to answer with, ``field`` the form
    field at fault (None when no one field is). The message is :func:`clip`-ped."""

    def __init__(self, message: str, status: int = 400, *, field: str | None = None):
        super().__init__(clip(message))
        self.status = status
        self.field = field


class DecodersBusy(RequestError):
    """Every decode slot stayed taken for the whole wait (503)."""

    def __init__(self, message: str):
        super().__init__(message, status=503, field=None)


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


def parse_plan_request(form, files, *, photo: tuple[bytes, str] | None = None,
                       max_pixels: int = DEFAULT_MAX_PIXELS, decoding=None, decode_wait_s: float = 30.0,
                       max_work: int = 0) -> PlanRequest:
    """Check a submitted plan request.

    Parameters
    ----------
    form : mapping of str to str
        ``wall_width``, ``wall_height`` (optional: blank follows the photo), ``unit``
        (m|cm|mm|ft|in), or instead ``wall`` as ``"4x2.5m"``; ``brushes`` or ``kit`` (a key
        of :data:`BRUSH_KITS`); ``inventory`` (default|upload|edit, with ``inventory_text``);
        and the options of :mod:`layerplan.options` by their field names (a blank field
        takes the option's default). :data:`LABELS` gives each field's label.
    files : mapping of str to FileStorage
        ``image`` (unless ``photo`` is given), ``inventory_file``.
    photo : (bytes, str), optional, keyword-only
        The photo and its original name, already read (e.g. kept from an earlier try).
    max_pixels : int, keyword-only
        Largest photo (width × height), read from its header before it is decoded.
    decoding : threading.Semaphore, optional, keyword-only
        Held while the photo is decoded, so that at most so many photos are decoded at once
        (a decoded photo takes about 3 bytes per pixel); None decodes at once.
    decode_wait_s : float, keyword-only
        How long to wait for ``decoding`` before answering 503.
    max_work : int, keyword-only
        Largest working pixels × paints × brushes of a plan (0: no limit), refused up front.

    Raises
    ------
    RequestError
        415 when the upload is not an image in a format we read, 413 when the photo has
        more than ``max_pixels`` pixels, 503 (:class:`DecodersBusy`) when no decode slot
        came free in time, 400 for everything else, each naming the field by its label
        and the bad value.
    """
    data, name = photo if photo is not None else read_photo(files)
    with _blamed():
        settings = _settings(form)
        output = options.output_kwargs(_values(form, options.form_options("output")))
    inventory_text, inventory_paints = _inventory(form, files)
    # the settings that need no photo are checked first, so a refused form costs no decode
    image = decode_photo(data, name, max_pixels=max_pixels, decoding=decoding, decode_wait_s=decode_wait_s)
    with _blamed():
        size = options.check_plan(settings, output, image.shape, inventory_paints=inventory_paints)
    if max_work:
        check_work(size.width_px * size.height_px, settings.paints, len(settings.brushes_mm), max_work)
    return PlanRequest(image_bytes=data, source_name=name, settings=settings, image_shape=image.shape[:2],
                       raster_px=(size.width_px, size.height_px), mm_per_px=size.mm_per_px,
                       inventory_text=inventory_text, output_options=output,
                       wall_mm=(size.wall_width_mm, size.wall_height_mm))


class _blamed:
    """Turn an :class:`~layerplan.options.OptionError` into a RequestError naming the form field by its label."""

    def __enter__(self):
        return self

    def __exit__(self, kind, exc, tb):
        if isinstance(exc, OptionError):
            field = exc.field if exc.field in LABELS else OPTIONS[exc.option].field
            raise RequestError(exc.form_message(LABELS[field]), field=field) from None
        return False


def decode_photo(data: bytes, name: str = "", *, max_pixels: int = DEFAULT_MAX_PIXELS, decoding=None,
                 decode_wait_s: float = 30.0):
    """Decode an uploaded photo within the server's limits: its pixel count checked from the header first,
    then decoded while holding a slot of ``decoding`` (a semaphore; None: at once).

    Returns
    -------
    image : (H, W, 3) uint8 array

    Raises
    ------
    RequestError
        413 over ``max_pixels``, 415 not an image we read, 400 damaged, 503 (:class:`DecodersBusy`)
        when no slot came free within ``decode_wait_s``.
    """
    _check_header(data, name, max_pixels)
    if decoding is None:
        slot = contextlib.nullcontext()
    elif not decoding.acquire(timeout=decode_wait_s):
        raise DecodersBusy("the server is busy reading other photos; send the form again in a minute")
    else:
        slot = _Release(decoding)
    with slot:
        return _decode(data, name, max_pixels)


class _Release:
    """Release an acquired semaphore on leaving the block."""

    def __init__(self, semaphore):
        self.semaphore = semaphore

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.semaphore.release()
        return False


def check_work(pixels: int, paints: int, brushes: int, max_work: int) -> None:
    """Refuse a plan whose working pixels × paints × brushes is over ``max_work``.

    The placer's time grows with each of the three (every layer visits every pixel and
    weighs every paint), so their product is the plan's size; the message says each factor
    and what would bring it under the limit.

    Raises
    ------
    RequestError
        400, field ``pixel_mm``, when over the limit.
    """
    work = pixels * paints * brushes
    if work > max_work:
        raise RequestError(
            f"this plan is too big for this server: {pixels / 1e6:.2g} megapixels × {paints} paints × "
            f"{brushes} brushes = {work / 1e6:,.0f} million (its limit is {max_work / 1e6:,.0f} million); "
            f"use a larger {LABELS.get('pixel_mm', 'pixel size')}, fewer paints or fewer brushes",
            field="pixel_mm")


def switch_on(form, name: str) -> bool:
    """A checkbox or API flag: on for 1, true, yes, on (any case)."""
    return _text(form, name).lower() in ("1", "true", "yes", "on")


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


def _check_header(data: bytes, name: str, max_pixels: int) -> None:
    """Refuse a photo with more than ``max_pixels`` pixels from its header alone (Pillow's
    :func:`PIL.Image.open` reads the header and decodes nothing until asked)."""
    try:
        with Image.open(io.BytesIO(data), formats=ACCEPTED_FORMATS) as im:
            width, height = im.size
    except Exception:  # noqa: BLE001 - not an image, or damaged: the decode says which, in its words
        return
    if width * height > max_pixels:
        raise RequestError(f"the photo is {width} × {height} pixels ({width * height / 1e6:.1f} megapixels); "
                           f"this server takes at most {max_pixels / 1e6:g} megapixels: send a smaller copy",
                           status=413, field="image")


def _decode(data: bytes, name: str, max_pixels: int = DEFAULT_MAX_PIXELS):
    source = io.BytesIO(data)
    if name:
        source.name = name  # only the messages use it ("image file 'x.png' is not an image")
    try:
        return load_image(source, max_pixels=max_pixels)
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


def _inventory(form, files) -> tuple[str | None, int | None]:
    """The painter's inventory as checked TOML text (None for the default set), and its number of paints."""
    choice = _text(form, "inventory") or "default"
    if choice not in INVENTORY_CHOICES:
        raise RequestError(f"inventory must be one of {', '.join(INVENTORY_CHOICES)}, got {choice!r}",
                           field="inventory")
    from layerplan import inventory as module  # late: only a plan's form needs it

    if choice == "default":
        return None, len(module.default_inventory())
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
        inventory = module.loads_inventory(text, source=source.strip())
    except ValueError as exc:
        raise RequestError(str(exc), field=where) from None
    except RecursionError:  # tables nested hundreds deep: refused here whatever the reader's own limit
        raise RequestError(f"{source.strip()} is nested too deeply to be an inventory", field=where) from None
    return text, len(inventory)


# ---------------------------------------------------------------------------- the settings
def _values(form, chosen) -> dict[str, Any]:
    """Option name -> value for the options given in the form (blank fields are left out)."""
    values = {}
    for o in chosen:
        text = _text(form, o.field)
        if text or (o.kind == "switch" and o.field in (form or {})):
            values[o.name] = o.parse(text)
    return values


def _settings(form) -> Settings:
    chosen = [o for o in options.form_options("settings") if o.kind not in ("wall", "brushes")]
    values = _values(form, chosen)
    values["wall"] = _wall(form)
    values["brushes"] = _brushes(form)
    return Settings(**options.settings_kwargs(values)).validated()


def _wall(form) -> tuple[float, float | None, str]:
    combined = _text(form, "wall")
    if combined and not _text(form, "wall_width"):
        return OPTIONS["wall"].parse(combined)
    unit = _text(form, "unit") or "m"
    if unit.lower() not in units.UNIT_ALIASES:
        raise RequestError(f"Unit must be one of {', '.join(UNIT_CHOICES)}, got {unit!r}", field="unit")
    unit = units.UNIT_ALIASES[unit.lower()]
    width_text = _text(form, "wall_width")
    if not width_text and _text(form, "surface"):  # a named sheet or board gives the size itself
        return DEFAULT_WALL_WIDTH_MM, None, unit
    if not width_text:
        raise RequestError("give the Width of the surface (field 'wall_width')", field="wall_width")
    width = _side("width", width_text, unit)
    height_text = _text(form, "wall_height")
    height = _side("height", height_text, unit) if height_text else None
    return width, height, unit


def _side(side: str, text: str, unit: str) -> float:
    """One side of the wall as typed in ``unit``, in mm (checked as the wall option checks it)."""
    name = f"wall_{side}"
    try:
        value = float(text)
    except ValueError:
        raise RequestError(f"{LABELS[name]} must be a number, got {_shown(text)}", field=name) from None
    if not math.isfinite(value):
        raise RequestError(f"{LABELS[name]} must be a finite number, got {_shown(text)}", field=name)
    if value <= 0:  # before converting: the message repeats what was typed
        raise RequestError(f"{LABELS[name]} must be > 0, got {clip(text)} {unit}", field=name)
    return options.check_wall_side(side, units.to_mm(value, unit), field=name, shown=f"{clip(text)} {unit}")


def _shown(text: str) -> str:
    """What was typed, quoted, cut short when long."""
    return repr(text) if len(text) <= LONGEST_SHOWN else clip(text)


def _brushes(form) -> tuple[float, ...]:
    text = _text(form, "brushes")
    if text:
        return OPTIONS["brushes"].parse(text)
    kit = _text(form, "kit") or DEFAULT_KIT
    if kit not in BRUSH_KITS:
        raise RequestError(f"{LABELS['kit']} must be one of {', '.join(BRUSH_KITS)}, got {kit!r}", field="kit")
    return tuple(BRUSH_KITS[kit]["brushes_mm"])


def _text(form, name: str) -> str:
    value = form.get(name) if form else None
    return value.strip() if isinstance(value, str) else ""
