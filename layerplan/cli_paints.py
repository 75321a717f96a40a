"""Command line: ``layerplan paints`` and ``layerplan mix``.

``layerplan paints [--inventory FILE] [--json]``
    List the inventory (JSON: ``[{"name", "srgb"}, ...]``).
``layerplan mix COLOUR... [--inventory FILE] [--json]``
    A recipe for each colour (JSON: a list of ``{"target", "parts", "predicted_srgb",
    "delta_e", "in_gamut"}``, with ``"no_tint": [names]`` where a mix uses paints the
    inventory gives no tint for).
``layerplan mix --combine NAME=PARTS ... [--inventory FILE] [--json]``
    What that mix looks like (JSON: ``{"predicted_srgb", "lab"}``, and ``"no_tint"`` likewise).

Errors go to stderr as ``layerplan: error: ...`` with exit status 2, and nothing is
printed on stdout.
"""

from __future__ import annotations

import argparse
import json
import math
import sys

from .inventory import Inventory, InventoryError, default_inventory, load_inventory
from .options import shown
from .plan import hex_to_rgb, rgb_to_hex

EXIT_USAGE = 2
#: most colours `layerplan mix` matches in one call (a palette is at most 32; a swatch card a few dozen)
MAX_MIX_COLOURS = 256
#: largest number of parts in a --combine mix (as a tint's parts in an inventory)
MAX_COMBINE_PARTS = 1000.0


class _Fail(Exception):
    """A bad argument or file: message for stderr, exit status 2."""


def add_mix_options(parser: argparse.ArgumentParser) -> None:
    """The solver options ``mix`` shares with ``plan`` (--mix-paints, --max-parts, --tolerance),
    declared in :mod:`layerplan.options`."""
    from .options import add_cli_options

    add_cli_options(parser, "mix")


def register(subparsers) -> None:
    """Add the ``paints`` and ``mix`` subcommands to an argparse subparsers object.

    Each sets ``func`` to a handler ``func(args) -> int`` (exit status).
    """
    paints = subparsers.add_parser(
        "paints", help="list the paints you own (the inventory)",
        description="List the paints of the inventory mixes are made from.",
    )
    paints.add_argument("--inventory", metavar="FILE", default=None,
                        help="your paints, a TOML file (default: the built-in basic acrylic set)")
    paints.add_argument("--json", action="store_true", help="print JSON: a list of {name, srgb}")
    paints.set_defaults(func=cmd_paints)

    mix = subparsers.add_parser(
        "mix", help="how to mix colours from your paints",
        description="Recipes for colours from the inventory (Kubelka-Munk mixing model), or with "
                    "--combine the colour a given mix will have. Mixes are predictions: try a swatch first.",
    )
    mix.add_argument("colours", nargs="*", metavar="COLOUR", help="wanted colour as sRGB hex, e.g. '#6b8e23' or 6b8e23")
    mix.add_argument("--combine", nargs="+", metavar="NAME=PARTS", default=None,
                     help="predict this mix instead, e.g. --combine 'Earth yellow=2' White=1")
    mix.add_argument("--inventory", metavar="FILE", default=None,
                     help="your paints, a TOML file (default: the built-in basic acrylic set)")
    mix.add_argument("--json", action="store_true", help="print JSON")
    add_mix_options(mix)
    mix.set_defaults(func=cmd_mix)


def inventory_from_arg(path: str | None) -> Inventory:
    """The inventory named by ``--inventory`` (or the default one)."""
    return default_inventory() if path is None else load_inventory(path)


#: the start of a setting's error message -> the command-line option that sets it
OPTION_OF_MESSAGE = {
    "max parts": "--max-parts",
    "max paints per mix": "--mix-paints",
    "tolerance": "--tolerance",
    "paints must": "--paints",
    "wall": "--wall",
    "brush": "--brushes",
    "give at least one brush": "--brushes",
    "at most 8 brushes": "--brushes",
    "pixel size": "--pixel-mm",
    "seed": "--seed",
    "stroke cost": "--stroke-cost",
    "fit": "--fit",
}


def name_option(message: str) -> str:
    """Prefix a setting's error message with the option that sets it (``--max-parts: ...``)."""
    for start, option in OPTION_OF_MESSAGE.items():
        if message.startswith(start):
            return f"{option}: {message}"
    return message


def _run(handler, args) -> int:
    try:
        text = handler(args)
    except (_Fail, InventoryError) as exc:
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except ValueError as exc:
        print(f"layerplan: error: {name_option(str(exc))}", file=sys.stderr)
        return EXIT_USAGE
    sys.stdout.write(text)
    sys.stdout.flush()
    return 0


def cmd_paints(args) -> int:
    """``layerplan paints``: exit status 0, or 2 with a message for a bad inventory."""
    return _run(_paints_text, args)


def cmd_mix(args) -> int:
    """``layerplan mix``: exit status 0, or 2 with a message for bad colours, names or files."""
    return _run(_mix_text, args)


def _paints_text(args) -> str:
    inv = inventory_from_arg(args.inventory)
    if args.json:
        return json.dumps(inv.to_list(), ensure_ascii=False, indent=2) + "\n"
    width = max(len(p.name) for p in inv.paints)
    lines = [inv.title or inv.source, ""] if (inv.title or args.inventory) else []
    for p in inv.paints:
        extra = []
        if p.white:
            extra.append("the white tints are made with")
        if p.tint is not None:
            extra.append(f"tint {p.tint.srgb} at {p.tint.paint_parts:g} : {p.tint.white_parts:g} with the white")
        elif not p.white and inv.white is not None:
            extra.append("no tint given")
        if p.tinting_strength != 1.0:
            extra.append(f"tinting strength {p.tinting_strength:g}")
        if p.containers_l:
            extra.append("tins " + ", ".join(f"{c:g} L" for c in p.containers_l))
        if p.note:
            extra.append(p.note)
        lines.append(f"{p.name:<{width}}  {p.srgb}" + (f"  ({'; '.join(extra)})" if extra else ""))
    return "\n".join(lines) + "\n"


def parse_colour(text: str) -> str:
    """``#rrggbb``, ``rrggbb``, ``#rgb`` -> ``#rrggbb``; ValueError naming the bad text."""
    try:
        return rgb_to_hex(hex_to_rgb(text))
    except ValueError:
        raise ValueError(f"not a colour: {shown(text)} (give sRGB hex like '#6b8e23')") from None


def _parse_combine(items: list[str]) -> dict[str, float]:
    parts: dict[str, float] = {}
    for item in items:
        name, sep, amount = item.rpartition("=")
        if not sep or not name.strip():
            raise _Fail(f"--combine: {shown(item)} is not NAME=PARTS (e.g. 'Earth yellow=2')")
        try:
            value = float(amount)
        except ValueError:
            raise _Fail(f"--combine: parts in {shown(item)} must be a number, got {shown(amount)}") from None
        if not math.isfinite(value) or not 0 < value <= MAX_COMBINE_PARTS:
            raise _Fail(f"--combine: parts in {shown(item)} must be > 0 and at most {MAX_COMBINE_PARTS:g}, "
                        f"got {shown(amount)}")
        key = name.strip()
        if key.casefold() in (k.casefold() for k in parts):
            raise _Fail(f"--combine: paint {shown(key)} is given twice")
        parts[key] = value
    return parts


def _mix_text(args) -> str:
    from .recipes import predict_mix, recipes_for_srgb

    if args.combine is not None and args.colours:
        raise _Fail("give either colours to mix or --combine NAME=PARTS ..., not both")
    if args.combine is None and not args.colours:
        raise _Fail("give at least one colour (e.g. layerplan mix '#6b8e23') or --combine NAME=PARTS ...")
    if args.combine is not None:
        parts = _parse_combine(args.combine)
        inv = inventory_from_arg(args.inventory)
        result = predict_mix(parts, inv)
        if args.json:
            return json.dumps(result, ensure_ascii=False) + "\n"
        recipe = " + ".join(f"{v:g} {inv.paint(k).name}" for k, v in parts.items())
        L, a, b = result["lab"]
        text = f"{recipe}  ->  {result['predicted_srgb']}  (CIELAB {L:.1f}, {a:.1f}, {b:.1f})\n"
        if result.get("no_tint"):
            text += f"  {_less_sure(result['no_tint'])}\n"
        return text

    if len(args.colours) > MAX_MIX_COLOURS:
        raise _Fail(f"at most {MAX_MIX_COLOURS} colours at a time, got {len(args.colours):,}")
    colours = [parse_colour(c) for c in args.colours]
    inv = inventory_from_arg(args.inventory)
    recipes = recipes_for_srgb(colours, inv, max_paints=args.mix_paints, max_parts=args.max_parts,
                               tolerance=args.tolerance)
    if args.json:
        return json.dumps([r.to_dict() for r in recipes], ensure_ascii=False, indent=2) + "\n"
    out = []
    for r in recipes:
        verdict = "mixable" if r.in_gamut else f"out of reach (more than ΔE00 {args.tolerance:g}); nearest mix"
        out.append(f"{r.target}: {verdict}: {r.predicted_srgb}, ΔE00 {r.delta_e:.1f}")
        for name, n in r.parts:
            out.append(f"  {n:>2} part{'s' if n != 1 else ' '} {name}")
        if r.no_tint:
            out.append(f"  {_less_sure(r.no_tint)}")
    out.append("")
    out.append("Mixes are model predictions: mix a small swatch and let it dry before mixing the batch.")
    return "\n".join(out) + "\n"


def _less_sure(names) -> str:
    """The caution for a mix using paints the inventory gives no tint for."""
    return f"no tint given: prediction less sure ({', '.join(names)})"


def main(argv=None) -> int:
    """Run only these subcommands (for tests and scripts); returns the exit status."""
    parser = argparse.ArgumentParser(prog="layerplan")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True
    register(sub)
    args = parser.parse_args(argv)
    return int(args.func(args))


if __name__ == "__main__":
    sys.exit(main())
