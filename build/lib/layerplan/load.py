"""Load stage: a photo file into an 8-bit sRGB array, refusing anything unsafe or unreadable.

Reads JPEG (including the multi-picture MPO variant phones and cameras write), PNG, WebP
and TIFF with Pillow. The picture comes out as it would be displayed: EXIF orientation
applied, an embedded ICC profile converted to sRGB, transparency flattened onto white
(the primed wall or paper shows through where the photo is transparent), and every
colour mode (greyscale, palette, CMYK, 16-bit, 32-bit integer and float) brought to
8 bits per channel by scaling its full range, never by clipping.

Nothing global is changed: Pillow's ``MAX_IMAGE_PIXELS`` and ``LOAD_TRUNCATED_IMAGES``
and the warning filters are left as they are; the pixel limit is our own argument,
checked from the header before any pixel data is decoded.

References
----------
.. [1] CIPA DC-008-2019, Exchangeable image file format for digital still cameras:
   Exif Version 2.32 (tag 274, Orientation).
.. [2] ISO/IEC 15948:2004, Portable Network Graphics (PNG) Specification.
.. [3] Adobe, TIFF Revision 6.0, 1992.
.. [4] T. Porter, T. Duff, "Compositing digital images", SIGGRAPH 1984 (the "over"
   operator used to flatten alpha).
.. [5] ICC.1:2022, Image technology colour management - Architecture, profile format
   and data structure.
"""

from __future__ import annotations

import io
import os
from pathlib import Path
from typing import BinaryIO, Union

import numpy as np
from PIL import Image, ImageCms, ImageOps, UnidentifiedImageError

#: refuse images with more pixels than this (checked from the header, before decoding);
#: 50 megapixels is above any phone or consumer camera photo we expect and keeps the
#: decoded RGB array within about 150 MB
DEFAULT_MAX_PIXELS = 50_000_000
#: refuse images with a side shorter than this: too little picture to plan from
MIN_SIDE_PX = 16
#: Pillow formats we read, usable as ``Image.open(..., formats=ACCEPTED_FORMATS)``
ACCEPTED_FORMATS: tuple[str, ...] = ("JPEG", "PNG", "WEBP", "TIFF")
#: what ``Image.format`` may then say: a multi-picture JPEG (phones and cameras write
#: them) opens through the JPEG decoder and reports itself as MPO
_OPENED_FORMATS: tuple[str, ...] = ACCEPTED_FORMATS + ("MPO",)
#: what we tell the user we read
_ACCEPTED_TEXT = "JPEG, PNG, WebP or TIFF"
#: the colour the ground shows through transparent parts: white primer / paper
BACKGROUND_RGB = (255, 255, 255)

Source = Union[str, os.PathLike, bytes, bytearray, memoryview, BinaryIO]

#: errors Pillow's decoders raise on damaged data
_DECODE_ERRORS = (OSError, SyntaxError, ValueError, EOFError, IndexError, TypeError, KeyError)


class ImageError(ValueError):
    """The input is not a photo layerplan can use; the message says why."""


def load_image(source: Source, *, max_pixels: int = DEFAULT_MAX_PIXELS,
               min_side: int = MIN_SIDE_PX) -> np.ndarray:
    """Read a photo into an (H, W, 3) uint8 sRGB array, as it is meant to be seen.

    Parameters
    ----------
    source : str, os.PathLike, bytes or binary file-like
        A path to a JPEG, PNG, WebP or TIFF file, the file's bytes, or a file object
        opened in binary mode (read from its current position to the end).
    max_pixels : int, keyword-only
        Largest width × height accepted, checked from the file header before any
        pixel data is decoded (protection against decompression bombs).
    min_side : int, keyword-only
        Smallest accepted width and height, in pixels.

    Returns
    -------
    image : (H, W, 3) uint8 array
        sRGB, C-contiguous, in display orientation. Where the file has transparency
        the picture is composited over white (paper / primer white), because that is
        what shows through on a primed wall.

    Raises
    ------
    ImageError
        Missing or empty file, data that is not an image, an image format other than
        JPEG/PNG/WebP/TIFF, a truncated or corrupt file, an image with a side shorter
        than ``min_side`` pixels, an image over ``max_pixels`` pixels (also when Pillow
        itself flags a decompression bomb), or a colour mode that cannot be converted.
    ValueError
        ``max_pixels`` or ``min_side`` is not a positive whole number.
    TypeError
        ``source`` is none of the accepted kinds, or a file opened in text mode.

    Notes
    -----
    Conversions to 8 bits per channel:

    * 16-bit greyscale (PNG/TIFF ``I;16``): ``round(v * 255 / 65535)``, so 65535 → 255
      and 32896 → 128. 16-bit RGB(A) Pillow reduces itself on decode by keeping the
      high byte, ``floor(v / 256)``, which is within 1 of the same scale.
    * 32-bit integer (``I``): taken as 16-bit data (how Pillow holds 16-bit greyscale),
      scaled as above after clipping to 0–65535.
    * float (``F``): taken as 0–1 when every value lies in [0, 1], else as 0–255
      (Pillow's own convention for ``F``); NaN becomes 0.
    * palette (``P``/``PA``) and greyscale with a transparent colour: expanded with
      their transparency, then flattened.
    * CMYK: through the embedded ICC profile when there is one, else Pillow's
      ``R = (255 - C)(255 - K) / 255`` (and likewise for G, B).

    A file cut short inside its pixel data is refused; one missing only what follows the
    pixels (e.g. a PNG's final IEND marker) decodes completely and is accepted. Truncated
    data is refused only while Pillow's ``ImageFile.LOAD_TRUNCATED_IMAGES``
    is False (its default); this function never sets it.

    References
    ----------
    CIPA DC-008 (Exif orientation); ISO/IEC 15948 (PNG); TIFF 6.0; Porter & Duff 1984
    (alpha "over"); ICC.1 (profiles).
    """
    _check_positive_int("max_pixels", max_pixels)
    _check_positive_int("min_side", min_side)
    fp, label, close = _open_source(source)
    try:
        img = _open_image(fp, label)
        try:
            return _decode(img, label, max_pixels=max_pixels, min_side=min_side)
        finally:
            img.close()
    finally:
        if close:
            fp.close()


def _check_positive_int(name: str, value) -> None:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value <= 0:
        raise ValueError(f"{name} must be a whole number > 0, got {value!r}")


def _open_source(source) -> tuple[BinaryIO, str, bool]:
    """(binary file, label for messages, whether we must close it)."""
    if isinstance(source, (str, os.PathLike)):
        path = Path(source)
        label = f"image file '{path}'"
        if not path.exists():
            raise ImageError(f"image file not found: '{path}'")
        if not path.is_file():
            raise ImageError(f"not a file: '{path}'")
        try:
            fp = open(path, "rb")
        except OSError as exc:
            raise ImageError(f"cannot read {label}: {exc.strerror or exc}") from exc
        if os.fstat(fp.fileno()).st_size == 0:
            fp.close()
            raise ImageError(f"{label} is empty (0 bytes)")
        return fp, label, True
    if isinstance(source, (bytes, bytearray, memoryview)):
        data = bytes(source)
        label = "image data"
    elif hasattr(source, "read"):
        data = source.read()
        if isinstance(data, str):
            raise TypeError("source file must be opened in binary mode ('rb'), not text mode")
        if not isinstance(data, (bytes, bytearray, memoryview)):
            raise TypeError(f"source.read() must return bytes, got {type(data).__name__}")
        data = bytes(data)
        name = getattr(source, "name", None)
        label = f"image file '{name}'" if isinstance(name, str) else "image data"
    else:
        raise TypeError(f"source must be a path, bytes or a binary file, got {type(source).__name__}")
    if not data:
        raise ImageError(f"{label} is empty (0 bytes)")
    return io.BytesIO(data), label, True


def _open_image(fp: BinaryIO, label: str) -> Image.Image:
    """Identify the image from its header only; nothing is decoded yet."""
    try:
        img = Image.open(fp, formats=ACCEPTED_FORMATS)
    except (Image.DecompressionBombError, Image.DecompressionBombWarning) as exc:
        # raised by Pillow's own header check (the warning only under an "error" filter)
        raise ImageError(f"{label} is refused as a possible decompression bomb: {exc}") from exc
    except UnidentifiedImageError:
        raise ImageError(_unidentified_message(fp, label)) from None
    except _DECODE_ERRORS as exc:
        raise ImageError(f"{label} has a damaged header and cannot be read: {exc}") from exc
    if img.format not in _OPENED_FORMATS:  # pragma: no cover - Image.open(formats=) guarantees it
        img.close()
        raise ImageError(f"{label} is {img.format}; layerplan reads {_ACCEPTED_TEXT}")
    return img


def _unidentified_message(fp: BinaryIO, label: str) -> str:
    """Name the format when it is an image we do not accept, else say it is no image."""
    fp.seek(0)
    head = fp.read(16)
    if head[4:8] == b"ftyp":
        return (f"{label} looks like a HEIF/HEIC or AVIF photo, which layerplan does not read; "
                f"export it as JPEG or PNG first (layerplan reads {_ACCEPTED_TEXT})")
    fp.seek(0)
    try:
        # header parse only, to name the format; the image is closed without decoding
        with Image.open(fp) as other:
            fmt = other.format
    except Exception:
        fmt = None
    if fmt:
        return f"{label} is a {fmt} image; layerplan reads {_ACCEPTED_TEXT}"
    return f"{label} is not an image (or is damaged beyond recognition); layerplan reads {_ACCEPTED_TEXT}"


def _decode(img: Image.Image, label: str, *, max_pixels: int, min_side: int) -> np.ndarray:
    w, h = img.size
    if w * h > max_pixels:
        raise ImageError(f"{label} is {w}×{h} px = {w * h / 1e6:.1f} megapixels, over the limit of "
                         f"{max_pixels / 1e6:g} megapixels (refused as a possible decompression bomb; "
                         f"scale the photo down first)")
    if min(w, h) < min_side:
        raise ImageError(f"{label} is only {w}×{h} px; each side must be at least {min_side} px")
    try:
        img.load()  # full decode: damaged or truncated data fails here
    except (Image.DecompressionBombError, Image.DecompressionBombWarning) as exc:
        raise ImageError(f"{label} is refused as a possible decompression bomb: {exc}") from exc
    except _DECODE_ERRORS as exc:
        raise ImageError(f"{label} is truncated or corrupt and cannot be decoded ({exc})") from exc
    try:
        img = ImageOps.exif_transpose(img)
    except _DECODE_ERRORS:
        pass  # unreadable EXIF: keep the stored orientation rather than refuse the photo
    try:
        rgb, alpha = _to_rgb8(img)
    except ValueError as exc:
        raise ImageError(f"{label} has colour mode {img.mode}, which cannot be converted to RGB ({exc})") from exc
    if alpha is not None:
        rgb = _flatten(rgb, alpha)
    return np.ascontiguousarray(rgb, dtype=np.uint8)


def _to_rgb8(img: Image.Image) -> tuple[np.ndarray, np.ndarray | None]:
    """(H, W, 3) uint8 sRGB and (H, W) uint8 alpha or None."""
    mode = img.mode
    if mode in ("I;16", "I;16L", "I;16B", "I;16N", "I"):
        a = np.asarray(img)
        if mode == "I":
            a = np.clip(a, 0, 65535)
        grey = _scale16(a)
        return np.repeat(grey[..., None], 3, axis=2), None
    if mode == "F":
        a = np.nan_to_num(np.asarray(img, dtype=np.float64), nan=0.0, posinf=0.0, neginf=0.0)
        top = 1.0 if a.size and a.min() >= 0.0 and a.max() <= 1.0 else 255.0
        grey = np.rint(np.clip(a / top, 0.0, 1.0) * 255.0).astype(np.uint8)
        return np.repeat(grey[..., None], 3, axis=2), None
    if mode in ("P", "PA") or ("transparency" in img.info and mode in ("1", "L", "RGB")):
        img = img.convert("RGBA")
        mode = "RGBA"
    elif mode in ("RGBa", "La", "LA"):
        img = img.convert("RGBA")
        mode = "RGBA"
    img = _to_srgb(img)
    mode = img.mode
    if mode == "RGBA":
        a = np.asarray(img)
        return a[..., :3], a[..., 3]
    if mode != "RGB":
        img = img.convert("RGB")
    return np.asarray(img), None


def _to_srgb(img: Image.Image) -> Image.Image:
    """Apply an embedded ICC profile (e.g. Display P3, Adobe RGB, a CMYK press profile)."""
    icc = img.info.get("icc_profile")
    if not icc or img.mode not in ("RGB", "RGBA", "CMYK"):
        return img
    try:
        src = ImageCms.ImageCmsProfile(io.BytesIO(icc))
        dst = ImageCms.createProfile("sRGB")
        out_mode = "RGBA" if img.mode == "RGBA" else "RGB"
        return ImageCms.profileToProfile(img, src, dst, renderingIntent=ImageCms.Intent.PERCEPTUAL,
                                         outputMode=out_mode)
    except (ImageCms.PyCMSError, OSError, ValueError, TypeError):
        return img  # unusable profile: treat the numbers as sRGB, as browsers do


def _scale16(a: np.ndarray) -> np.ndarray:
    """16-bit samples to 8-bit, round(v * 255 / 65535)."""
    v = a.astype(np.uint32)
    return ((v * 255 + 32767) // 65535).astype(np.uint8)


def _flatten(rgb: np.ndarray, alpha: np.ndarray) -> np.ndarray:
    """Composite over the white background (Porter-Duff "over"), rounded to nearest."""
    a = alpha.astype(np.uint32)[..., None]
    bg = np.asarray(BACKGROUND_RGB, dtype=np.uint32)
    out = (rgb.astype(np.uint32) * a + bg * (255 - a) + 127) // 255
    return out.astype(np.uint8)
