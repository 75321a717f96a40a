"""The painter's own paints: the inventory file.

An inventory is a small TOML file (TOML 1.0, read with Python's ``tomllib``) with one
``[[paint]]`` table per paint the painter owns::

    # My wall paints
    title = "Community-centre wall kit"      # optional, shown by `layerplan paints`
    format = 2                               # optional: the format of this file (1 or 2)
    currency = "EUR"                         # needed when a container has a price (a code or a sign)

    [[paint]]
    name = "Titanium white"         # required; unique (ignoring case); no '='
    srgb = "#f4f3ee"                # the paint's colour as sRGB hex ...
    white = true                    # the white your tints are made with (at most one paint)
    containers_l = [1.0, 4.0]       # optional: tin sizes you can buy, litres ...
    # ... or with what each costs: containers_l = [{ litres = 1.0, price = 14.5 }, 4.0]
    note = "covers well"            # optional free text

    [[paint]]
    name = "Warm blue"
    srgb = "#23308a"                                              # masstone ...
    tint = { srgb = "#8f9ad0", paint_parts = 1, white_parts = 9 }  # ... and a tint with the white

    [[paint]]
    name = "Earth red"
    lab = [38.5, 30.1, 28.7]        # ... or CIELAB (D65, 2°) if you measured it
    tinting_strength = 1.2          # optional, only for a paint without a tint (see below)

Each paint gives exactly one of ``srgb`` (``#rrggbb`` or ``#rgb``) or ``lab``
(``[L, a, b]``, L from 0 to 100): its **masstone**, the colour of the paint alone, thick
enough to hide what is under it. A measured colour outside the sRGB gamut is shown as its
nearest sRGB colour; the mixing model uses the measured CIELAB.

**Tints (format 2).** A paint may also give ``tint``: the colour of a mix of that paint
with the inventory's white, as ``srgb`` or ``lab``, and the parts it was mixed in
(``paint_parts`` and ``white_parts``, numbers > 0, decimals allowed; by volume, like the
recipes). One part colour to about nine parts white is a clear tint that tells the most
(common practice for tint tests). Exactly one paint, the white the tints were made with,
says ``white = true``; it has no tint itself. Black is described like any colour, by its
grey tint. A tint's lightness must lie between the paint's and the white's (within
:data:`TINT_LIGHTNESS_SLACK`), which catches swapped parts. From masstone and tint the
mixing model (:mod:`layerplan.mixing`) fits how the paint absorbs and scatters light at
each wavelength, which is what makes a blue and a yellow mix to green; a tint also
measures how strongly the paint colours a mix, so ``tinting_strength`` may not be given
beside it.

**Paints without a tint** (every paint of a format-1 file) use the simpler model: the
paint scatters light alike at all wavelengths, as strongly as its ``tinting_strength``
says (default 1: like the white). A paint of strength 2 counts as if twice as much were
in the mix; a paint alone is unchanged whatever its strength. Recipes that use such a
paint with others say "no tint given: prediction less sure".

Unknown keys are refused (so a misspelt ``tinting_strenght`` is not silently ignored);
every error names the file, the line (of the faulty field where it is written on a line
of its own, else of the paint's ``[[paint]]`` header), the paint's number and name, and
the field (``tint.white_parts`` for a part of a tint).

**Prices.** A container size may be written as a table ``{ litres = 1.0, price = 14.5 }``
instead of a bare number: what one such container costs, in the file's ``currency`` (text of
at most :data:`MAX_CURRENCY_CHARS` characters, a code such as ``EUR`` or a sign such as ``$``;
needed once any price is given). The shopping list then says what each paint and the whole
list cost (:func:`layerplan.quantities.paint_use`); sizes without a price leave the cost unknown.

A default inventory ships with the package (``layerplan/data/default_inventory.toml``):
a basic acrylic set for wall work with masstones and tints, approximate values from memory.
"""

from __future__ import annotations

import math
import re
import stat
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from .options import shown
from .plan import hex_to_rgb, rgb_to_hex

#: the most paints an inventory may list (far more than a wall painter carries; keeps the
#: mix table of :mod:`layerplan.recipes` small)
MAX_INVENTORY_PAINTS = 64
#: longest paint name accepted, characters
MAX_NAME_CHARS = 60
#: tinting strength limits (a ratio to an ordinary paint; 50 already means "a speck dyes the tin")
MIN_TINTING_STRENGTH, MAX_TINTING_STRENGTH = 0.01, 50.0
#: largest container size accepted, litres (a 200 L drum)
MAX_CONTAINER_L = 200.0
#: largest inventory file read, bytes (64 paints with tints and notes take some 20 kB)
MAX_FILE_BYTES = 1_000_000
#: most sizes listed for one paint's containers (a paint line is sold in five or six; common practice)
MAX_CONTAINER_SIZES = 8
#: smallest container size, litres (quantities are worked out to 10 mL)
MIN_CONTAINER_L = 0.01
#: deepest nesting of arrays and inline tables (an inventory needs 2: a tint's ``lab`` inside its table);
#: checked on the text before parsing, since Python's TOML reader recurses once per level
MAX_NESTING = 8
#: longest title and note, characters
MAX_TITLE_CHARS, MAX_NOTE_CHARS = 200, 500

_PAINT_KEYS = ("name", "srgb", "lab", "white", "tint", "tinting_strength", "containers_l", "note")
_TINT_KEYS = ("srgb", "lab", "paint_parts", "white_parts")
_TOP_KEYS = ("title", "format", "currency", "paint")
#: longest currency text accepted ("EUR", "$", "CHF")
MAX_CURRENCY_CHARS = 8
#: largest price of one container accepted (a sanity bound in any currency)
MAX_PRICE = 1_000_000.0
#: the inventory formats this version reads (1: masstones only; 2: adds ``white`` and ``tint``)
FORMATS = (1, 2)
#: CIELAB L* by which a tint may fall outside its paint's and its white's lightness (measuring noise)
TINT_LIGHTNESS_SLACK = 2.0
#: largest number of parts in a tint (a tint of 1 part in 1000 is already near-white)
MAX_TINT_PARTS = 1000.0
_HEADER_RE = re.compile(r"^\s*\[\[\s*paint\s*\]\]")
#: a ``key = value`` line of a table (bare or quoted key; TOML 1.0, "Keys")
_KEY_RE = re.compile(r"""^\s*(?:"([^"]+)"|'([^']+)'|([A-Za-z0-9_-]+))\s*=""")

DEFAULT_INVENTORY_NAME = "default_inventory.toml"


class InventoryError(ValueError):
    """An inventory file or entry is wrong; the message names file, line/entry and field."""


@dataclass(frozen=True)
class Tint:
    """A tint of a paint with the inventory's white.

    Parameters
    ----------
    srgb : str
        ``#rrggbb`` of the tint (shown; the nearest sRGB colour if ``lab`` was measured).
    lab : tuple of float
        CIELAB (D65, 2°) of the tint, as measured or that of ``srgb``.
    paint_parts, white_parts : float
        The parts of paint and white it was mixed from (> 0).
    """

    srgb: str
    lab: tuple[float, float, float]
    paint_parts: float
    white_parts: float

    @property
    def paint_fraction(self) -> float:
        """Share of the paint in the tint, in (0, 1)."""
        return self.paint_parts / (self.paint_parts + self.white_parts)


@dataclass(frozen=True)
class StockPaint:
    """One paint the painter owns.

    Parameters
    ----------
    name : str
        The painter's name for it.
    srgb : str
        ``#rrggbb`` colour the mixing model starts from.
    lab : tuple of float
        CIELAB (D65, 2°): as measured if the file gave ``lab``, else that of ``srgb``.
    tinting_strength : float
        Scattering of a paint without a tint in the simpler model (1 = like the white).
    containers_l : tuple of float
        Tin sizes the painter buys, litres (may be empty).
    prices : tuple of (float or None)
        What one container of each size in ``containers_l`` costs, in the inventory's currency
        (None where not given); empty when no size of this paint has a price.
    note : str
    white : bool
        The white the inventory's tints are made with.
    tint : Tint or None
        A tint with that white, if given.
    """

    name: str
    srgb: str
    lab: tuple[float, float, float]
    tinting_strength: float = 1.0
    containers_l: tuple[float, ...] = ()
    note: str = ""
    white: bool = False
    tint: Tint | None = None
    prices: tuple[float | None, ...] = ()

    @property
    def rgb(self) -> tuple[int, int, int]:
        return hex_to_rgb(self.srgb)


@dataclass(frozen=True)
class Inventory:
    """The paints available for mixing, in file order.

    ``source`` (where it was read from) is for messages only and does not take part in
    equality, so two files listing the same paints give equal inventories.
    """

    paints: tuple[StockPaint, ...]
    title: str = ""
    source: str = field(default="<inventory>", compare=False)
    #: the currency of the containers' prices ("" when none has a price)
    currency: str = ""

    def __len__(self) -> int:
        return len(self.paints)

    def names(self) -> list[str]:
        return [p.name for p in self.paints]

    def index(self, name: str) -> int:
        """Position of the paint called ``name`` (ignoring case and surrounding spaces).

        Raises
        ------
        ValueError
            If no paint has that name; the message lists the names there are.
        """
        want = name.strip().casefold()
        for i, p in enumerate(self.paints):
            if p.name.casefold() == want:
                return i
        raise ValueError(f"unknown paint {name!r}; the inventory has: {', '.join(self.names())}")

    def paint(self, name: str) -> StockPaint:
        return self.paints[self.index(name)]

    @property
    def white(self) -> StockPaint | None:
        """The paint marked ``white = true`` (the white of the tints), or None."""
        return next((p for p in self.paints if p.white), None)

    def to_list(self) -> list[dict]:
        """``[{"name", "srgb"}, ...]``: the JSON listing of ``layerplan paints --json``."""
        return [{"name": p.name, "srgb": p.srgb} for p in self.paints]


def load_inventory(path) -> Inventory:
    """Read an inventory file.

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    Inventory

    Raises
    ------
    InventoryError
        If the file is missing, unreadable, not UTF-8 TOML, or an entry is wrong (the
        message names the file, line/entry and field).
    """
    p = Path(path)
    source = str(path)
    try:
        mode = p.stat().st_mode
        if stat.S_ISDIR(mode):
            raise InventoryError(f"{source}: is a folder, not an inventory file")
        if not stat.S_ISREG(mode):  # a device (/dev/zero), a pipe or a socket could be read forever
            raise InventoryError(f"{source}: not a regular file; give the path of a TOML inventory file")
        with p.open("rb") as f:
            data = f.read(MAX_FILE_BYTES + 1)  # never more than the limit, whatever the size says
        if len(data) > MAX_FILE_BYTES:
            raise InventoryError(f"{source}: inventory file is too large (over {MAX_FILE_BYTES:,} bytes; at most "
                                 f"{MAX_FILE_BYTES:,})")
    except InventoryError:
        raise
    except FileNotFoundError:
        raise InventoryError(f"{source}: no such inventory file") from None
    except PermissionError:
        raise InventoryError(f"{source}: cannot read the inventory file (permission denied)") from None
    except ValueError:  # a path with a NUL byte in it
        raise InventoryError(f"{source}: not a usable file path") from None
    except OSError as exc:
        raise InventoryError(f"{source}: cannot read the inventory file: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InventoryError(f"{source}: not a UTF-8 text file (bad byte at offset {exc.start})") from None
    return loads_inventory(text, source=source)


def default_inventory() -> Inventory:
    """The inventory shipped with layerplan (a basic acrylic set; colours approximate)."""
    text = resources.files("layerplan").joinpath("data", DEFAULT_INVENTORY_NAME).read_text("utf-8")
    return loads_inventory(text, source=f"<default inventory {DEFAULT_INVENTORY_NAME}>")


def loads_inventory(text: str, *, source: str = "<inventory>") -> Inventory:
    """Parse inventory TOML text (see the module docstring for the format).

    Parameters
    ----------
    text : str
    source : str, keyword-only
        Name used in messages (a file name).

    Raises
    ------
    InventoryError
    """
    if len(text) > MAX_FILE_BYTES:
        raise InventoryError(f"{source}: inventory is too large ({len(text):,} characters; at most "
                             f"{MAX_FILE_BYTES:,})")
    deep = _too_deep(text, MAX_NESTING)
    if deep is not None:
        raise InventoryError(f"{source}: line {deep}: arrays or tables nested more than {MAX_NESTING} deep; an "
                             f"inventory needs at most 2 (a tint's lab list inside its table)")
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InventoryError(f"{source}: not valid TOML: {_cut(str(exc))}") from None
    except RecursionError:  # nesting the text scan did not see; refused all the same
        raise InventoryError(f"{source}: nested too deep to read (at most {MAX_NESTING} levels)") from None
    unknown = [k for k in doc if k not in _TOP_KEYS]
    if unknown:
        raise InventoryError(
            f"{source}: unknown top-level key {_said(unknown[0])} (allowed: {', '.join(_TOP_KEYS)}; "
            f"each paint goes in a [[paint]] table)"
        )
    title = doc.get("title", "")
    if not isinstance(title, str):
        raise InventoryError(f"{source}: 'title' must be text, got {_said(title)}")
    if len(title) > MAX_TITLE_CHARS:
        raise InventoryError(f"{source}: 'title' is longer than {MAX_TITLE_CHARS} characters ({len(title):,})")
    fmt = doc.get("format", 1)
    if isinstance(fmt, bool) or fmt not in FORMATS:
        raise InventoryError(f"{source}: 'format' must be one of {', '.join(map(str, FORMATS))}, got {_said(fmt)}")
    currency = doc.get("currency", "")
    if not isinstance(currency, str) or len(currency.strip()) > MAX_CURRENCY_CHARS \
            or any(ord(c) < 32 for c in currency):
        raise InventoryError(f"{source}: 'currency' must be text of at most {MAX_CURRENCY_CHARS} characters "
                             f"(such as \"EUR\" or \"$\"), got {_said(currency)}")
    currency = currency.strip()
    entries = doc.get("paint")
    if entries is None or entries == []:
        raise InventoryError(f"{source}: no paints: add one [[paint]] table per paint")
    if not isinstance(entries, list) or not all(isinstance(e, dict) for e in entries):
        raise InventoryError(f"{source}: 'paint' must be a list of [[paint]] tables")
    if len(entries) > MAX_INVENTORY_PAINTS:
        raise InventoryError(f"{source}: {len(entries)} paints; at most {MAX_INVENTORY_PAINTS} are allowed")

    lines = text.splitlines()
    header_lines = [n for n, line in enumerate(lines, start=1) if _HEADER_RE.match(line)]
    if len(header_lines) != len(entries):  # paints given inline: no line to point at
        header_lines = []
    field_lines = _field_lines(lines, header_lines)

    paints: list[StockPaint] = []
    seen: dict[str, int] = {}
    for i, entry in enumerate(entries):
        line = header_lines[i] if header_lines else None
        paint = _parse_paint(entry, i + 1, line, source, field_lines=field_lines[i] if field_lines else None)
        key = paint.name.casefold()
        if key in seen:
            j = seen[key]
            where = f" (line {header_lines[j]})" if header_lines else ""
            name_line = field_lines[i].get("name", line) if field_lines else line
            raise InventoryError(
                f"{_where(source, i + 1, name_line, paint.name)}: field 'name': {paint.name!r} is already used by "
                f"paint {j + 1}{where}; names must differ (ignoring case)"
            )
        seen[key] = i
        paints.append(paint)
    _check_white(paints, header_lines, field_lines, source)
    priced = next((i for i, p in enumerate(paints) if any(v is not None for v in p.prices)), None)
    if priced is not None and not currency:
        line = (field_lines[priced].get("containers_l", header_lines[priced]) if field_lines else None)
        raise InventoryError(f"{_where(source, priced + 1, line, paints[priced].name)}: field 'containers_l': a "
                             "price needs the currency it is in; add `currency = \"EUR\"` (or yours) at the top "
                             "of the file")
    return Inventory(paints=tuple(paints), title=title.strip(), source=source, currency=currency)


def _check_white(paints: list[StockPaint], header_lines, field_lines, source: str) -> None:
    """At most one white; a tint needs it."""
    def at(i: int, fieldname: str) -> str:
        line = (field_lines[i].get(fieldname, header_lines[i]) if field_lines else None)
        return _where(source, i + 1, line, paints[i].name)

    whites = [i for i, p in enumerate(paints) if p.white]
    if len(whites) > 1:
        raise InventoryError(
            f"{at(whites[1], 'white')}: field 'white': {paints[whites[0]].name!r} (paint {whites[0] + 1}) is "
            f"already the white; mark only the white your tints are made with"
        )
    tinted = [i for i, p in enumerate(paints) if p.tint is not None]
    if tinted and not whites:
        raise InventoryError(
            f"{at(tinted[0], 'tint')}: field 'tint': a tint needs the white it was made with; add "
            f"`white = true` to that white's [[paint]] table"
        )
    for i in tinted:
        # white lightens: a tint darker than its paint or lighter than the white is a slip (swapped
        # parts, or colours of the wrong swatch), and would make the fit nonsense
        L_paint, L_tint, L_white = paints[i].lab[0], paints[i].tint.lab[0], paints[whites[0]].lab[0]
        if not L_paint - TINT_LIGHTNESS_SLACK <= L_tint <= L_white + TINT_LIGHTNESS_SLACK:
            raise InventoryError(
                f"{at(i, 'tint')}: field 'tint': its lightness (L* {L_tint:.0f}) should lie between the paint's "
                f"(L* {L_paint:.0f}) and the white's (L* {L_white:.0f}); check the tint's colour and that "
                f"paint_parts and white_parts are not swapped"
            )


def _field_lines(lines: list[str], header_lines: list[int]) -> list[dict[str, int]]:
    """For each ``[[paint]]`` table, the 1-based line of each of its ``key = value`` lines."""
    found: list[dict[str, int]] = []
    for i, start in enumerate(header_lines):
        end = header_lines[i + 1] - 1 if i + 1 < len(header_lines) else len(lines)
        keys: dict[str, int] = {}
        for n in range(start + 1, end + 1):  # the lines after the header, up to the next paint
            m = _KEY_RE.match(lines[n - 1])
            if m:
                keys.setdefault(next(g for g in m.groups() if g is not None), n)
        found.append(keys)
    return found


def _where(source: str, number: int, line: int | None, name: str | None) -> str:
    at = f"{source}: line {line}: " if line is not None else f"{source}: "
    label = f"paint {number}" + (f" ({name!r})" if name else "")
    return at + label


def _parse_paint(entry: dict, number: int, line: int | None, source: str, *,
                 field_lines: dict[str, int] | None = None) -> StockPaint:
    raw_name = entry.get("name")
    label = raw_name.strip() if isinstance(raw_name, str) and raw_name.strip() else None
    if label is not None and len(label) > MAX_NAME_CHARS:  # messages name the paint, never at length
        label = label[:MAX_NAME_CHARS - 1] + "…"

    def fail(fieldname: str, message: str) -> InventoryError:
        # the field's own line (a tint's parts are on the tint's line), else the paint's header
        at = (field_lines or {}).get(fieldname.split(".")[0], line)
        return InventoryError(f"{_where(source, number, at, label)}: field {_said(fieldname)}: {message}")

    for key in entry:
        if key not in _PAINT_KEYS:
            raise fail(key, f"unknown field (allowed: {', '.join(_PAINT_KEYS)})")

    if raw_name is None:
        raise fail("name", "missing; every paint needs a name")
    if not isinstance(raw_name, str) or not raw_name.strip():
        raise fail("name", f"must be non-empty text, got {_said(raw_name)}")
    name = " ".join(raw_name.split())
    if len(name) > MAX_NAME_CHARS:
        raise fail("name", f"longer than {MAX_NAME_CHARS} characters ({len(name):,})")
    if "=" in name or any(ord(c) < 32 for c in name):
        raise fail("name", f"may not contain '=' or control characters, got {_said(name)}")

    srgb, lab = _colour(entry, fail, "")

    white = entry.get("white", False)
    if not isinstance(white, bool):
        raise fail("white", f"must be true or false, got {_said(white)}")
    tint = None
    if "tint" in entry:
        if white:
            raise fail("tint", "the white has no tint (tints are made with it)")
        tint = _parse_tint(entry["tint"], fail)
        if "tinting_strength" in entry:
            raise fail("tinting_strength", "not used with a tint (the tint measures how strongly the paint "
                                           "colours a mix); remove one of them")

    strength = entry.get("tinting_strength", 1.0)
    if (
        not _finite_number(strength)
        or not MIN_TINTING_STRENGTH <= strength <= MAX_TINTING_STRENGTH
    ):
        raise fail(
            "tinting_strength",
            f"must be a number from {MIN_TINTING_STRENGTH:g} to {MAX_TINTING_STRENGTH:g}, got {_said(strength)}",
        )

    containers = entry.get("containers_l", [])
    if not isinstance(containers, list):
        raise fail("containers_l", f"must be a list of sizes in litres, e.g. [1.0, 4.0], got {_said(containers)}")
    # each size listed is tried when the tins to buy are worked out: a few, as a shop sells them
    if len(containers) > MAX_CONTAINER_SIZES:
        raise fail("containers_l", f"at most {MAX_CONTAINER_SIZES} sizes, got {len(containers):,}")
    containers, prices = _container_records(containers, fail)
    for c in containers:
        if not _finite_number(c) or not 0.0 < c <= MAX_CONTAINER_L:
            raise fail("containers_l", f"sizes must be > 0 and at most {MAX_CONTAINER_L:g} litres, got {_said(c)}")
        if c < MIN_CONTAINER_L:
            raise fail("containers_l", f"sizes must be at least {MIN_CONTAINER_L:g} litres (10 mL), got {_said(c)}")

    note = entry.get("note", "")
    if not isinstance(note, str):
        raise fail("note", f"must be text, got {_said(note)}")
    if len(note) > MAX_NOTE_CHARS:
        raise fail("note", f"longer than {MAX_NOTE_CHARS} characters ({len(note):,})")

    order = sorted(range(len(containers)), key=lambda k: float(containers[k]))
    return StockPaint(
        name=name,
        srgb=srgb,
        lab=lab,
        tinting_strength=float(strength),
        containers_l=tuple(float(containers[k]) for k in order),
        note=note.strip(),
        white=white,
        tint=tint,
        prices=tuple(prices[k] for k in order) if any(v is not None for v in prices) else (),
    )


def _container_records(items: list, fail) -> tuple[list, list]:
    """``containers_l`` entries as (sizes, prices): a size alone, or ``{ litres = 1.0, price = 14.5 }``."""
    sizes, prices = [], []
    for c in items:
        if not isinstance(c, dict):
            sizes.append(c)
            prices.append(None)
            continue
        unknown = sorted(set(c) - {"litres", "price"})
        if unknown or "litres" not in c:
            raise fail("containers_l", "a container with a price is { litres = 1.0, price = 14.5 }, "
                                       f"got {_said(c)}")
        price = c.get("price")
        if price is not None and (isinstance(price, bool) or not isinstance(price, (int, float))
                                  or not math.isfinite(price) or not 0.0 <= price <= MAX_PRICE):
            raise fail("containers_l", f"a price must be a number from 0 to {MAX_PRICE:g}, got {_said(price)}")
        sizes.append(c["litres"])
        prices.append(None if price is None else float(price))
    return sizes, prices


def _colour(entry: dict, fail, prefix: str) -> tuple[str, tuple[float, float, float]]:
    """``(srgb, lab)`` of a table giving exactly one of ``srgb`` or ``lab``."""
    has_srgb, has_lab = "srgb" in entry, "lab" in entry
    if has_srgb == has_lab:
        raise fail(prefix + "srgb", "give exactly one of 'srgb' (\"#rrggbb\") or 'lab' ([L, a, b])")
    if has_srgb:
        value = entry["srgb"]
        if not isinstance(value, str):
            raise fail(prefix + "srgb", f"must be a text hex colour like \"#c8962e\", got {_said(value)}")
        try:
            rgb = hex_to_rgb(value)
        except ValueError:
            raise fail(prefix + "srgb", f"not a hex colour (#rrggbb): {_said(value)}") from None
        return rgb_to_hex(rgb), _lab_of_srgb(rgb)
    value = entry["lab"]
    if not isinstance(value, list) or len(value) != 3 or not all(_finite_number(v) for v in value):
        raise fail(prefix + "lab", f"must be three numbers [L, a, b], got {_said(value)}")
    L, a, b = (float(v) for v in value)
    if not 0.0 <= L <= 100.0:
        raise fail(prefix + "lab", f"L must be from 0 to 100, got {L:g}")
    if abs(a) > 200.0 or abs(b) > 200.0:
        raise fail(prefix + "lab", f"a and b must be within ±200, got [{L:g}, {a:g}, {b:g}]")
    lab = (L, a, b)
    return _srgb_of_lab(lab), lab


def _parse_tint(value, fail) -> Tint:
    """The ``tint = {srgb|lab, paint_parts, white_parts}`` table of a paint."""
    if not isinstance(value, dict):
        raise fail("tint", "must be a table like { srgb = \"#8f9ad0\", paint_parts = 1, white_parts = 9 }, "
                           f"got {_said(value)}")

    for key in value:
        if key not in _TINT_KEYS:
            raise fail("tint." + key, f"unknown field of a tint (allowed: {', '.join(_TINT_KEYS)})")
    srgb, lab = _colour(value, fail, "tint.")
    parts = {}
    for key in ("paint_parts", "white_parts"):
        if key not in value:
            raise fail("tint." + key, "missing; say how many parts of paint and of white the tint was mixed from")
        v = value[key]
        if not _finite_number(v) or not 0.0 < v <= MAX_TINT_PARTS:
            raise fail("tint." + key, f"must be a number > 0 and at most {MAX_TINT_PARTS:g}, got {_said(v)}")
        parts[key] = float(v)
    return Tint(srgb=srgb, lab=lab, **parts)


def _finite_number(value) -> bool:
    """A TOML number (not a boolean) that a float holds: 1e400 and 10**400 are not."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    try:
        return math.isfinite(value)
    except OverflowError:
        return False


def _said(value) -> str:
    """A value as an error message repeats it: short, whatever was written (a table is named, not printed)."""
    if isinstance(value, dict):
        return f"a table of {len(value)} field{'s' if len(value) != 1 else ''}"
    if isinstance(value, list) and len(value) > 8:
        return f"a list of {len(value):,} items"
    try:
        return shown(value)
    except RecursionError:
        return "a value nested too deep to show"


def _cut(text: str, limit: int = 300) -> str:
    return text if len(text) <= limit else text[:limit - 1] + "…"


#: what the nesting scan stops at: brackets, the start of a string or a comment, a line end
_SCAN_RE = re.compile(r"""[\[\]{}"'#\n]""")
_BASIC_RE = re.compile(r'(?:[^"\\\n]|\\.)*"?')  # rest of a one-line "..." string (escapes skipped)
_ML_BASIC_RE = re.compile(r'(?:[^"\\]|\\.|"(?!""))*(?:"""|$)', re.S)  # rest of a """...""" string


def _too_deep(text: str, limit: int) -> int | None:
    """The 1-based line where arrays and inline tables nest more than ``limit`` deep, or None.

    Brackets inside strings and comments are not counted (TOML 1.0: strings, comments).
    A table header such as ``[[paint]]`` counts 2 while it is open, like an array of arrays.
    """
    depth, line, pos, n = 0, 1, 0, len(text)
    while True:
        m = _SCAN_RE.search(text, pos)
        if m is None:
            return None
        c, i = m.group(), m.start()
        if c == "\n":
            line, pos = line + 1, i + 1
        elif c == "#":
            end = text.find("\n", i)
            pos = n if end < 0 else end
        elif c in "[{":
            depth += 1
            if depth > limit:
                return line
            pos = i + 1
        elif c in "]}":
            depth, pos = max(0, depth - 1), i + 1
        else:  # a string: skip to its end, counting its lines
            if text.startswith(c * 3, i):
                if c == '"':
                    end = _ML_BASIC_RE.match(text, i + 3).end()
                else:
                    close = text.find("'''", i + 3)
                    end = n if close < 0 else close + 3
            elif c == '"':
                end = _BASIC_RE.match(text, i + 1).end()
            else:
                close = text.find("'", i + 1)
                nl = text.find("\n", i + 1)
                end = n if close < 0 else close + 1
                if 0 <= nl < close:  # an unclosed literal string ends at the line end (the parser says so)
                    end = nl
            line += text.count("\n", i, end)
            pos = end


def _lab_of_srgb(rgb) -> tuple[float, float, float]:
    import numpy as np

    from .colour import srgb_to_lab

    lab = srgb_to_lab(np.array(rgb, dtype=np.uint8))
    return tuple(round(float(v), 4) for v in lab)


def _srgb_of_lab(lab) -> str:
    import numpy as np

    from .colour import lab_to_srgb

    return rgb_to_hex(lab_to_srgb(np.array(lab, dtype=float)))
