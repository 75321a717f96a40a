"""Swatch cards on the web: a page to download a card and to turn a photo of a painted one into an inventory.

``GET /swatches``                  the page (linked from the start page)
``POST /api/swatches/card``        form: ``inventory`` (default|upload|edit, with ``inventory_file`` or
                                   ``inventory_text``), optional ``white``, ``tint`` ("1:9") -> the card, SVG
``POST /api/swatches/read``        form: ``photo`` (the painted card) and the inventory it was printed from,
                                   as above -> the inventory file (format 2), TOML

A chosen ``inventory_file`` is used even when ``inventory`` was left at ``default``. Bad input gets 400 (413 for an upload over the size limit) with ``{"error": "..."}``, as the
rest of the API; nothing is stored.
"""

from __future__ import annotations

from flask import Blueprint, Response, current_app, jsonify, render_template, request

from . import forms, service

bp = Blueprint("swatches", __name__)


def _error(message: str, status: int = 400):
    response = jsonify(error=message)
    response.status_code = status
    return response


def _inventory():
    """The inventory chosen in the form (the start page's three ways), or RequestError."""
    from layerplan.inventory import default_inventory, loads_inventory

    form = request.form
    chosen = request.files.get("inventory_file")
    if chosen is not None and chosen.filename and (form.get("inventory") or "default") == "default":
        form = {**form.to_dict(), "inventory": "upload"}  # a file chosen means that file, whatever the radio says
    text, _ = forms._inventory(form, request.files)
    return default_inventory() if text is None else loads_inventory(text, source="the inventory")


@bp.get("/swatches")
def page():
    from layerplan.inventory import default_inventory
    from layerplan.swatches import DEFAULT_TINT, paint_colours

    return render_template("swatches.html", paints=paint_colours(default_inventory()),
                           tint=f"{DEFAULT_TINT[0]}:{DEFAULT_TINT[1]}")


@bp.post("/api/swatches/card")
def card():
    from layerplan.swatches import DEFAULT_TINT, SwatchError, card_layout, card_svg

    try:
        inventory = _inventory()
        white = (request.form.get("white") or "").strip() or None
        tint = (request.form.get("tint") or "").strip() or DEFAULT_TINT
        svg = card_svg(card_layout(inventory, white=white, tint=tint))
    except (forms.RequestError, SwatchError, ValueError) as exc:
        status = getattr(exc, "status", 400)
        return _error(str(exc), 400 if status == 415 else status)  # this route has always said 400 for a non-image
    return Response(svg, mimetype="image/svg+xml",
                    headers={"Content-Disposition": 'attachment; filename="swatch-card.svg"'})


@bp.post("/api/swatches/read")
def read():
    from layerplan.swatches import SwatchError, inventory_toml, read_card

    try:
        upload = request.files.get("photo")
        data = upload.read() if upload is not None else b""
        if not data:
            raise SwatchError("no photo: send the photo of the painted card in the form field 'photo'")
        inventory = _inventory()
        config = current_app.config
        image = forms.decode_photo(data, max_pixels=int(config["MAX_PHOTO_PIXELS"]),
                                   decoding=service.state().decodes, decode_wait_s=float(config["DECODE_WAIT_S"]))
        reading = read_card(image, inventory)
        text = inventory_toml(reading, inventory)
    except (forms.RequestError, SwatchError, ValueError) as exc:  # ImageError is a ValueError
        status = getattr(exc, "status", 400)
        return _error(str(exc), 400 if status == 415 else status)  # this route has always said 400 for a non-image
    return Response(text, mimetype="application/toml",
                    headers={"Content-Disposition": 'attachment; filename="my-paints.toml"'})
