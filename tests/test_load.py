"""Tests for layerplan.load: every accepted kind of photo, and every refusal.

Test images are synthetic, built here with Pillow, or written byte by byte from the file
format specifications (PNG: ISO/IEC 15948:2004; TIFF: Adobe TIFF 6.0) where Pillow cannot
write the case (16-bit RGB) or where we need a header that lies (decompression bomb).
"""

import io
import re
import struct
import warnings
import zlib

import numpy as np
import pytest
from PIL import Image, ImageCms, ImageFile

from layerplan.load import DEFAULT_MAX_PIXELS, MIN_SIDE_PX, ImageError, load_image

RNG_SEED = 20240601


# ---------------------------------------------------------------- helpers

def _save(img: Image.Image, fmt: str, **kw) -> bytes:
    buf = io.BytesIO()
    img.save(buf, fmt, **kw)
    return buf.getvalue()


def _noise(h=24, w=32, seed=RNG_SEED) -> np.ndarray:
    return np.random.default_rng(seed).integers(0, 256, (h, w, 3), dtype=np.uint8)


def _quadrants(h=32, w=48) -> np.ndarray:
    """Four flat quadrants: red, green / blue, yellow (top-left, top-right / bottom-left, bottom-right)."""
    a = np.zeros((h, w, 3), np.uint8)
    a[: h // 2, : w // 2] = (255, 0, 0)
    a[: h // 2, w // 2:] = (0, 255, 0)
    a[h // 2:, : w // 2] = (0, 0, 255)
    a[h // 2:, w // 2:] = (255, 255, 0)
    return a


def _png_chunk(kind: bytes, data: bytes) -> bytes:
    # ISO/IEC 15948 §5.3: length, type, data, CRC-32 over type and data
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data))


def _png16(samples: np.ndarray) -> bytes:
    """A 16-bit-per-sample PNG, written from the spec: grey (H, W), RGB (H, W, 3) or RGBA (H, W, 4)."""
    colour_type = {2: 0, 3: 2, 4: 6}[samples.ndim if samples.ndim == 2 else 3 + (samples.shape[2] == 4)]
    h, w = samples.shape[:2]
    ihdr = struct.pack(">IIBBBBB", w, h, 16, colour_type, 0, 0, 0)  # §11.2.2
    rows = samples.astype(">u2").reshape(h, -1)
    raw = b"".join(b"\x00" + row.tobytes() for row in rows)  # filter type 0 per scanline
    return (b"\x89PNG\r\n\x1a\n" + _png_chunk(b"IHDR", ihdr) + _png_chunk(b"IDAT", zlib.compress(raw))
            + _png_chunk(b"IEND", b""))


def _tiff_rgb16(samples: np.ndarray) -> bytes:
    """An uncompressed little-endian 16-bit RGB baseline TIFF, written from TIFF 6.0 §8 and §2."""
    h, w, _ = samples.shape
    pixels = samples.astype("<u2").tobytes()
    n_tags = 10
    ifd_off = 8
    bps_off = ifd_off + 2 + 12 * n_tags + 4
    data_off = bps_off + 6
    SHORT, LONG = 3, 4
    tags = [  # (tag, type, count, value), ascending tag order as §2 requires
        (256, LONG, 1, w), (257, LONG, 1, h), (258, SHORT, 3, bps_off), (259, SHORT, 1, 1),
        (262, SHORT, 1, 2), (273, LONG, 1, data_off), (277, SHORT, 1, 3), (278, LONG, 1, h),
        (279, LONG, 1, len(pixels)), (284, SHORT, 1, 1),
    ]
    out = b"II*\x00" + struct.pack("<I", ifd_off) + struct.pack("<H", n_tags)
    for tag, typ, count, value in tags:
        packed = struct.pack("<HH", value, 0) if typ == SHORT and count == 1 else struct.pack("<I", value)
        out += struct.pack("<HHI", tag, typ, count) + packed
    out += struct.pack("<I", 0) + struct.pack("<HHH", 16, 16, 16)
    assert len(out) == data_off
    return out + pixels


def _patch_png_size(png: bytes, width: int, height: int) -> bytes:
    """Rewrite IHDR width/height (and its CRC) so the header claims another size."""
    assert png[12:16] == b"IHDR"
    ihdr = bytearray(png[16:29])
    struct.pack_into(">II", ihdr, 0, width, height)
    return png[:16] + bytes(ihdr) + struct.pack(">I", zlib.crc32(b"IHDR" + bytes(ihdr))) + png[33:]


def _scale16_reference(v):
    # the definition of scaling a 16-bit sample to 8 bits: round(v * 255 / 65535)
    return int(np.floor(v * 255 / 65535 + 0.5))


# ---------------------------------------------------------------- sources and output shape

def test_path_bytes_and_file_give_the_same_array(tmp_path):
    src = _noise()
    data = _save(Image.fromarray(src), "PNG")
    p = tmp_path / "photo.png"
    p.write_bytes(data)
    from_path = load_image(p)
    assert from_path.dtype == np.uint8 and from_path.shape == (24, 32, 3)
    assert from_path.flags["C_CONTIGUOUS"]
    # PNG is lossless (ISO/IEC 15948), so the pixels must come back unchanged
    np.testing.assert_array_equal(from_path, src)
    np.testing.assert_array_equal(load_image(str(p)), src)
    np.testing.assert_array_equal(load_image(data), src)
    np.testing.assert_array_equal(load_image(bytearray(data)), src)
    with open(p, "rb") as f:
        np.testing.assert_array_equal(load_image(f), src)
    np.testing.assert_array_equal(load_image(io.BytesIO(data)), src)


@pytest.mark.parametrize("fmt, kw", [("WEBP", {"lossless": True}), ("TIFF", {}),
                                     ("TIFF", {"compression": "tiff_lzw"})])
def test_lossless_formats_round_trip(fmt, kw):
    src = _noise()
    np.testing.assert_array_equal(load_image(_save(Image.fromarray(src), fmt, **kw)), src)


def test_jpeg_close_to_source():
    src = np.zeros((32, 32, 3), np.uint8)
    src[:, :16] = (200, 120, 40)
    src[:, 16:] = (30, 60, 90)
    out = load_image(_save(Image.fromarray(src), "JPEG", quality=95))
    # lossy: flat areas away from the edge stay within a few levels
    assert np.abs(out[:, :12].astype(int) - src[:, :12]).max() <= 4
    assert np.abs(out[:, 20:].astype(int) - src[:, 20:]).max() <= 4


def test_multi_picture_jpeg_reads_first_picture():
    # MPO (CIPA DC-007) is what many phones and cameras write under a .jpg name
    frames = [Image.new("RGB", (20, 20), (250, 10, 10)), Image.new("RGB", (20, 20), (10, 10, 250))]
    data = _save(frames[0], "MPO", save_all=True, append_images=frames[1:])
    assert Image.open(io.BytesIO(data)).format == "MPO"
    out = load_image(data)
    assert np.abs(out.astype(int) - (250, 10, 10)).max() <= 4


def test_multi_page_tiff_reads_first_page():
    pages = [Image.new("RGB", (20, 20), (1, 2, 3)), Image.new("RGB", (20, 20), (200, 200, 200))]
    out = load_image(_save(pages[0], "TIFF", save_all=True, append_images=pages[1:]))
    assert (out == (1, 2, 3)).all()


# ---------------------------------------------------------------- EXIF orientation

# CIPA DC-008 (Exif 2.32) tag 274 Orientation: 2 = mirrored left-right, 3 = rotated 180°,
# 6 = "0th row is the visual right side, 0th column the visual top" (display = stored turned
# 90° clockwise), 8 = display = stored turned 90° counter-clockwise. numpy is the reference
# for the transforms.
@pytest.mark.parametrize("orientation, transform", [
    (2, np.fliplr),
    (3, lambda a: np.rot90(a, 2)),
    (6, lambda a: np.rot90(a, -1)),
    (8, lambda a: np.rot90(a, 1)),
])
def test_exif_orientation_applied(orientation, transform):
    stored = _quadrants()
    exif = Image.Exif()
    exif[0x0112] = orientation
    data = _save(Image.fromarray(stored), "JPEG", quality=95, exif=exif.tobytes())
    out = load_image(data)
    expected = transform(stored)
    assert out.shape == expected.shape
    # by content: every quadrant is where the transform puts it (JPEG error is a few levels,
    # a wrong quadrant is off by 255)
    err = np.abs(out.astype(int) - expected).mean(axis=2)
    assert np.median(err) < 4
    assert (err < 40).mean() > 0.9


def test_tiff_orientation_applied_once():
    # TIFF 6.0 tag 274 has the same meaning as Exif's; Pillow applies it while loading a
    # TIFF, and it must not be applied a second time
    stored = _quadrants()
    out = load_image(_save(Image.fromarray(stored), "TIFF", tiffinfo={274: 6}))
    np.testing.assert_array_equal(out, np.rot90(stored, -1))


def test_exif_orientation_6_top_is_stored_left_column():
    # Exif 2.32 orientation 6: the stored 0th column is the visual top, so the stored
    # left half (red over blue) becomes the top half, red on the right
    exif = Image.Exif()
    exif[0x0112] = 6
    out = load_image(_save(Image.fromarray(_quadrants(32, 48)), "JPEG", quality=95, exif=exif.tobytes()))
    assert out.shape == (48, 32, 3)
    top_right, top_left = out[8, 24].astype(int), out[8, 8].astype(int)
    assert np.abs(top_right - (255, 0, 0)).max() < 30
    assert np.abs(top_left - (0, 0, 255)).max() < 30


def test_no_orientation_tag_keeps_stored_orientation():
    out = load_image(_save(Image.fromarray(_quadrants()), "JPEG", quality=95))
    assert out.shape == (32, 48, 3)
    assert np.abs(out[4, 4].astype(int) - (255, 0, 0)).max() < 30


# ---------------------------------------------------------------- alpha and palettes

def test_rgba_flattened_onto_white_matches_pillow_alpha_composite():
    rng = np.random.default_rng(RNG_SEED)
    rgba = rng.integers(0, 256, (20, 24, 4), dtype=np.uint8)
    img = Image.fromarray(rgba, "RGBA")
    out = load_image(_save(img, "PNG"))
    # reference: Pillow's Porter-Duff "over" onto an opaque white background
    ref = np.asarray(Image.alpha_composite(Image.new("RGBA", img.size, (255, 255, 255, 255)), img).convert("RGB"))
    assert np.abs(out.astype(int) - ref).max() <= 1


def test_rgba_known_values():
    rgba = np.zeros((16, 48, 4), np.uint8)
    rgba[:, :16] = (255, 0, 0, 0)      # fully transparent: white shows
    rgba[:, 16:32] = (255, 0, 0, 128)  # half: over white, 255 * 127/255 = 127 for g, b
    rgba[:, 32:] = (10, 20, 30, 255)   # opaque: unchanged
    out = load_image(_save(Image.fromarray(rgba, "RGBA"), "PNG"))
    assert (out[:, :16] == 255).all()
    assert (out[:, 16:32] == (255, 127, 127)).all()  # Porter & Duff 1984 "over", rounded
    assert (out[:, 32:] == (10, 20, 30)).all()


def test_la_flattened():
    la = np.zeros((16, 48, 2), np.uint8)
    la[:, :16] = (40, 0)
    la[:, 16:32] = (40, 255)
    la[:, 32:] = (0, 51)  # 20 % black over white: 255 * 0.8 = 204
    out = load_image(_save(Image.fromarray(la, "LA"), "PNG"))
    assert (out[:, :16] == 255).all()
    assert (out[:, 16:32] == 40).all()
    assert (out[:, 32:] == 204).all()


def _two_colour_palette_image() -> Image.Image:
    p = Image.new("P", (20, 20), 0)
    p.putpalette([255, 0, 0, 0, 0, 255])
    p.paste(1, (10, 0, 20, 20))
    return p


def test_palette_without_transparency():
    out = load_image(_save(_two_colour_palette_image(), "PNG"))
    assert (out[:, :10] == (255, 0, 0)).all() and (out[:, 10:] == (0, 0, 255)).all()


def test_palette_with_transparent_index():
    out = load_image(_save(_two_colour_palette_image(), "PNG", transparency=0))
    assert (out[:, :10] == 255).all()
    assert (out[:, 10:] == (0, 0, 255)).all()


def test_palette_with_partial_alpha_entries():
    # PNG tRNS for palette images (ISO/IEC 15948 §11.3.2.1): one alpha per entry
    out = load_image(_save(_two_colour_palette_image(), "PNG", transparency=b"\x80\xff"))
    assert (out[:, :10] == (255, 127, 127)).all()
    assert (out[:, 10:] == (0, 0, 255)).all()


def test_greyscale_with_transparent_value():
    a = np.zeros((20, 20), np.uint8)
    a[:, 10:] = 200
    out = load_image(_save(Image.fromarray(a), "PNG", transparency=0))
    assert (out[:, :10] == 255).all() and (out[:, 10:] == 200).all()


# ---------------------------------------------------------------- colour modes

def test_greyscale_l_and_bilevel():
    a = np.tile(np.arange(0, 256, 8, dtype=np.uint8), (16, 1))
    out = load_image(_save(Image.fromarray(a), "PNG"))
    assert (out == a[..., None]).all()
    bw = Image.fromarray(a >= 128)  # mode "1"
    assert bw.mode == "1"
    out = load_image(_save(bw, "PNG"))
    assert (out == np.where(a >= 128, 255, 0)[..., None]).all()


def _cmyk_image() -> tuple[Image.Image, list[tuple[int, int, int]]]:
    cmyk = [(0, 0, 0, 0), (255, 0, 0, 0), (0, 255, 0, 0), (128, 0, 0, 128), (0, 0, 0, 255)]
    # device CMYK to RGB without a profile, R = 255 (1 - C)(1 - K), likewise G from M and B from Y
    # (the usual naive conversion, common practice; also what Pillow documents for convert)
    expected = [tuple(round((255 - c) * (255 - k) / 255) for c in (cc, m, y)) for cc, m, y, k in cmyk]
    img = Image.new("CMYK", (16 * len(cmyk), 16))
    for i, v in enumerate(cmyk):
        img.paste(v, (16 * i, 0, 16 * (i + 1), 16))
    return img, expected


def test_cmyk_tiff_exact():
    img, expected = _cmyk_image()
    out = load_image(_save(img, "TIFF"))
    for i, rgb in enumerate(expected):
        assert np.abs(out[:, 16 * i:16 * (i + 1)].astype(int) - rgb).max() <= 1, (i, rgb)


def test_cmyk_jpeg():
    img, expected = _cmyk_image()
    data = _save(img, "JPEG", quality=95)
    assert Image.open(io.BytesIO(data)).mode == "CMYK"
    out = load_image(data)
    assert out.shape == (16, 80, 3)
    for i, rgb in enumerate(expected):  # block centres, away from JPEG edge ringing
        assert np.abs(out[8, 16 * i + 8].astype(int) - rgb).max() <= 4, (i, rgb)


def test_16bit_greyscale_png_scaled_not_clipped():
    values = [0, 257, 257 * 100, 32767, 32768, 32896, 65535]
    a = np.repeat(np.array([values], np.uint16), 16, axis=0).repeat(4, axis=1)
    img = Image.fromarray(a)
    data = _save(img, "PNG")
    assert Image.open(io.BytesIO(data)).mode in ("I;16", "I")
    out = load_image(data)
    got = out[0, ::4, 0].tolist()
    assert got == [_scale16_reference(v) for v in values]
    assert got == [0, 1, 100, 127, 128, 128, 255]  # 32896 -> 128, 65535 -> 255 (round(v*255/65535))
    assert (out[..., 0] == out[..., 1]).all() and (out[..., 1] == out[..., 2]).all()


def test_16bit_greyscale_png_from_spec_bytes():
    # the same check on a PNG written from ISO/IEC 15948 directly, not by Pillow
    a = np.full((16, 16), 32896, np.uint16)
    a[:, 8:] = 65535
    out = load_image(_png16(a))
    assert (out[:, :8] == 128).all() and (out[:, 8:] == 255).all()


def test_16bit_rgb_png_scaled():
    # Pillow keeps the high byte of 16-bit RGB: within 1 of round(v * 255 / 65535)
    s = np.zeros((16, 16, 3), np.uint16)
    s[:, :8] = (65535, 32896, 0)
    s[:, 8:] = (257 * 10, 257 * 200, 65535)
    out = load_image(_png16(s))
    assert (out[:, :8] == (255, 128, 0)).all()
    assert (out[:, 8:] == (10, 200, 255)).all()


def test_16bit_rgba_png_flattened():
    s = np.zeros((16, 16, 4), np.uint16)
    s[:, :8] = (0, 0, 0, 0)           # transparent black: white shows
    s[:, 8:] = (32896, 0, 0, 65535)   # opaque mid red
    out = load_image(_png16(s))
    assert (out[:, :8] == 255).all() and (out[:, 8:] == (128, 0, 0)).all()


def test_16bit_rgb_tiff_scaled():
    # Pillow cannot write 16-bit RGB, so the file is written from the TIFF 6.0 spec here
    s = np.zeros((16, 16, 3), np.uint16)
    s[:, :8] = (65535, 32896, 0)
    s[:, 8:] = (257 * 10, 257 * 200, 65535)
    data = _tiff_rgb16(s)
    assert Image.open(io.BytesIO(data)).size == (16, 16)
    out = load_image(data)
    assert (out[:, :8] == (255, 128, 0)).all()
    assert (out[:, 8:] == (10, 200, 255)).all()


def test_32bit_integer_tiff_taken_as_16bit():
    a = np.repeat(np.array([[0, 32896, 65535, 100000]], np.int32), 16, axis=0).repeat(4, axis=1)
    img = Image.fromarray(a)
    assert img.mode == "I"
    out = load_image(_save(img, "TIFF"))
    assert out[0, ::4, 0].tolist() == [0, 128, 255, 255]


@pytest.mark.parametrize("values, expected", [
    ([0.0, 0.25, 0.5, 1.0], [0, 64, 128, 255]),      # 0–1 floats, round(v * 255)
    ([0.0, 64.0, 128.0, 300.0], [0, 64, 128, 255]),  # beyond 1: Pillow's 0–255 convention, clipped
])
def test_float_tiff(values, expected):
    a = np.repeat(np.array([values], np.float32), 16, axis=0).repeat(4, axis=1)
    img = Image.fromarray(a)
    assert img.mode == "F"
    out = load_image(_save(img, "TIFF"))
    assert out[0, ::4, 0].tolist() == expected


# ---------------------------------------------------------------- ICC profiles

def _srgb_profile_with_red_and_green_swapped() -> bytes:
    """lcms's sRGB profile with the rXYZ and gXYZ colorant tags exchanged (ICC.1 §9.2)."""
    b = bytearray(ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes())
    n = struct.unpack(">I", b[128:132])[0]  # tag count after the 128-byte header (ICC.1 §7.3)
    entries = {}
    for i in range(n):
        sig, off, size = struct.unpack(">4sII", b[132 + 12 * i:144 + 12 * i])
        entries[sig] = (i, off, size)
    (ir, offr, sr), (ig, offg, sg) = entries[b"rXYZ"], entries[b"gXYZ"]
    struct.pack_into(">4sII", b, 132 + 12 * ir, b"rXYZ", offg, sg)
    struct.pack_into(">4sII", b, 132 + 12 * ig, b"gXYZ", offr, sr)
    b[84:100] = bytes(16)  # profile ID: zero means "not computed"
    return bytes(b)


def test_embedded_icc_profile_converted_to_srgb():
    # device red under a profile whose red colorant is sRGB's green is sRGB green
    img = Image.new("RGB", (16, 16), (255, 0, 0))
    out = load_image(_save(img, "PNG", icc_profile=_srgb_profile_with_red_and_green_swapped()))
    assert np.abs(out.astype(int) - (0, 255, 0)).max() <= 2


def test_srgb_or_broken_icc_profile_leaves_values():
    img = Image.new("RGB", (16, 16), (200, 50, 10))
    srgb = ImageCms.ImageCmsProfile(ImageCms.createProfile("sRGB")).tobytes()
    assert np.abs(load_image(_save(img, "PNG", icc_profile=srgb)).astype(int) - (200, 50, 10)).max() <= 1
    # an unusable profile is ignored and the numbers taken as sRGB
    assert (load_image(_save(img, "PNG", icc_profile=b"not a profile" * 10)) == (200, 50, 10)).all()


# ---------------------------------------------------------------- refusals

def test_missing_file_names_the_path(tmp_path):
    p = tmp_path / "no such photo.jpg"
    with pytest.raises(ImageError, match=r"image file not found: '.*no such photo\.jpg'"):
        load_image(p)


def test_directory_refused(tmp_path):
    with pytest.raises(ImageError, match=r"not a file: "):
        load_image(tmp_path)


def test_empty_file_and_empty_bytes(tmp_path):
    p = tmp_path / "empty.png"
    p.write_bytes(b"")
    with pytest.raises(ImageError, match=r"image file '.*empty\.png' is empty \(0 bytes\)"):
        load_image(p)
    with pytest.raises(ImageError, match=r"image data is empty \(0 bytes\)"):
        load_image(b"")
    with pytest.raises(ImageError, match=r"is empty \(0 bytes\)"):
        load_image(io.BytesIO())


def test_text_file_named_png(tmp_path):
    p = tmp_path / "notes.png"
    p.write_text("wall: community centre, north side\n")
    with pytest.raises(ImageError, match=r"image file '.*notes\.png' is not an image.*JPEG, PNG, WebP or TIFF"):
        load_image(p)


@pytest.mark.parametrize("fmt", ["GIF", "BMP"])
def test_other_image_formats_named(fmt):
    data = _save(Image.new("RGB", (20, 20), (9, 9, 9)), fmt)
    with pytest.raises(ImageError, match=rf"is a {fmt} image; layerplan reads JPEG, PNG, WebP or TIFF"):
        load_image(data)


def test_heif_named():
    # ISO/IEC 14496-12 file type box: size, 'ftyp', major brand
    data = struct.pack(">I", 24) + b"ftypheic" + bytes(12) + bytes(100)
    with pytest.raises(ImageError, match=r"HEIF/HEIC or AVIF.*export it as JPEG or PNG"):
        load_image(data)


@pytest.mark.parametrize("fmt", ["PNG", "JPEG"])
def test_truncated_file_refused(fmt):
    data = _save(Image.fromarray(_noise(64, 64)), fmt)
    assert ImageFile.LOAD_TRUNCATED_IMAGES is False
    with pytest.raises(ImageError, match=r"image data is truncated or corrupt and cannot be decoded"):
        load_image(data[: len(data) // 2])
    assert ImageFile.LOAD_TRUNCATED_IMAGES is False  # not switched on behind our back


def test_tiny_image_refused_naming_size():
    with pytest.raises(ImageError, match=rf"only 1×1 px; each side must be at least {MIN_SIDE_PX} px"):
        load_image(_save(Image.new("RGB", (1, 1)), "PNG"))
    with pytest.raises(ImageError, match=r"only 15×40 px"):
        load_image(_save(Image.new("RGB", (15, 40)), "PNG"))
    assert load_image(_save(Image.new("RGB", (MIN_SIDE_PX, MIN_SIDE_PX)), "PNG")).shape == (16, 16, 3)
    with pytest.raises(ImageError, match=r"only 16×16 px; each side must be at least 32 px"):
        load_image(_save(Image.new("RGB", (16, 16)), "PNG"), min_side=32)


def test_over_max_pixels_refused_before_decoding():
    # a header claiming 8000×8000 = 64 Mpx over a few bytes of data: decoding would fail as
    # truncated, so the megapixel message shows the check came first
    small = _save(Image.new("1", (32, 32)), "PNG")
    bomb = _patch_png_size(small, 8000, 8000)
    assert 8000 * 8000 > DEFAULT_MAX_PIXELS and 8000 * 8000 < Image.MAX_IMAGE_PIXELS
    with pytest.raises(ImageError, match=r"8000×8000 px = 64\.0 megapixels, over the limit of 50 megapixels"):
        load_image(bomb)


def test_lowered_max_pixels():
    data = _save(Image.new("RGB", (100, 100)), "PNG")
    with pytest.raises(ImageError, match=r"100×100 px = 0\.0 megapixels, over the limit of 0\.005 megapixels"):
        load_image(data, max_pixels=5000)
    assert load_image(data, max_pixels=10_000).shape == (100, 100, 3)


def test_pillow_decompression_bomb_error_becomes_image_error():
    # 20000×20000 = 400 Mpx is over twice Pillow's MAX_IMAGE_PIXELS, so Image.open itself raises
    before = Image.MAX_IMAGE_PIXELS
    bomb = _patch_png_size(_save(Image.new("1", (32, 32)), "PNG"), 20000, 20000)
    with pytest.raises(ImageError, match=r"refused as a possible decompression bomb"):
        load_image(bomb, max_pixels=10**9)
    assert Image.MAX_IMAGE_PIXELS == before  # Pillow's global limit untouched


def test_pillow_decompression_bomb_warning_as_error_becomes_image_error():
    # 10000×10000 = 100 Mpx: over Pillow's MAX_IMAGE_PIXELS, under twice it, so Pillow warns;
    # an application running with that warning as an error must still get an ImageError
    bomb = _patch_png_size(_save(Image.new("1", (32, 32)), "PNG"), 10000, 10000)
    with warnings.catch_warnings():
        warnings.simplefilter("error", Image.DecompressionBombWarning)
        with pytest.raises(ImageError, match=r"refused as a possible decompression bomb"):
            load_image(bomb, max_pixels=10**9)


def test_bad_arguments():
    data = _save(Image.new("RGB", (20, 20)), "PNG")
    with pytest.raises(ValueError, match=r"max_pixels must be a whole number > 0, got 0"):
        load_image(data, max_pixels=0)
    with pytest.raises(ValueError, match=r"min_side must be a whole number > 0, got 2\.5"):
        load_image(data, min_side=2.5)
    with pytest.raises(TypeError, match=r"source must be a path, bytes or a binary file, got int"):
        load_image(42)
    with pytest.raises(TypeError, match=re.escape("source file must be opened in binary mode ('rb')")):
        load_image(io.StringIO("abc"))


def test_image_error_is_value_error():
    assert issubclass(ImageError, ValueError)
    with pytest.raises(ValueError, match=r"is not an image"):
        load_image(b"hello")
