"""Command line: ``layerplan swatches`` (print a swatch card) and ``layerplan swatches --read PHOTO``.

``layerplan swatches --out CARD.svg [--inventory FILE] [--white NAME] [--tint 1:9]``
    Write the swatch card for the inventory's paints (A4 at actual size, SVG).
``layerplan swatches --read PHOTO --out PAINTS.toml [--inventory FILE]``
    Find the painted card in a photo, measure it and write an inventory file (format 2).
    The inventory must be the one the card was printed from; the tint ratio and the white
    are read from the card.

Errors go to stderr as ``layerplan: error: ...`` with exit status 2; nothing is written then,
and an existing file is never replaced.
"""

from __future__ import annotations

import sys

from .inventory import InventoryError

EXIT_USAGE = 2


def register(subparsers) -> None:
    """Add the ``swatches`` subcommand to an argparse subparsers object."""
    p = subparsers.add_parser(
        "swatches", help="print a swatch card, or read a photo of a painted one into an inventory",
        description="Without --read: write a printable swatch card (A4, SVG, print at actual size) with a "
                    "masstone box and a tint box for each paint of the inventory. With --read PHOTO: find the "
                    "painted card in a phone photo, balance its colours on the card's grey patch and write an "
                    "inventory file with each paint's masstone and tint.")
    p.add_argument("--read", metavar="PHOTO", default=None,
                   help="a photo of the painted card (JPEG, PNG, WebP, TIFF) to measure")
    p.add_argument("--out", required=True, metavar="FILE",
                   help="file to write: the card (.svg), or with --read the inventory (.toml); never replaced")
    p.add_argument("--inventory", metavar="FILE", default=None,
                   help="your paints, a TOML file (default: the built-in basic acrylic set); with --read, the one "
                        "the card was printed from")
    p.add_argument("--white", metavar="NAME", default=None,
                   help="the paint tints are made with (default: the inventory's white)")
    p.add_argument("--tint", metavar="PAINT:WHITE", default=None,
                   help="parts of paint and of white in each tint box, by volume (default 1:9)")
    p.set_defaults(func=cmd_swatches)


def cmd_swatches(args) -> int:
    """``layerplan swatches``: exit status 0, or 2 with a message (nothing written)."""
    from .inventory import default_inventory, load_inventory
    from .swatches import (DEFAULT_TINT, SwatchError, card_layout, card_svg, inventory_toml, read_card,
                           write_new_file)

    try:
        try:
            inventory = default_inventory() if args.inventory is None else load_inventory(args.inventory)
        except InventoryError as exc:
            raise SwatchError(f"--inventory: {exc}") from None
        if args.read is None:
            layout = card_layout(inventory, white=args.white, tint=args.tint or DEFAULT_TINT)
            out = write_new_file(args.out, card_svg(layout).encode("utf-8"))
            print(f"swatch card for {len(inventory)} paints written to {out}: print it at actual size (100 %)",
                  file=sys.stderr)
            return 0
        if args.white is not None or args.tint is not None:
            raise SwatchError("--white and --tint are for printing a card; reading takes them from the card")
        from .load import load_image

        photo = load_image(args.read)
        reading = read_card(photo, inventory)
        text = inventory_toml(reading, inventory)
        out = write_new_file(args.out, text.encode("utf-8"))
    except (SwatchError, ValueError) as exc:  # the photo loader's ImageError is a ValueError
        print(f"layerplan: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    measured = sum(1 for k in reading.colours)
    print(f"{measured} boxes measured, inventory written to {out}", file=sys.stderr)
    for paint, kind in reading.blank:
        print(f"layerplan: note: the {kind} box of {paint} looks unpainted", file=sys.stderr)
    return 0
