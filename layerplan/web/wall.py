"""Pages for taking a finished plan to the real wall: the projector view and the site-photo mock-up.

Thin views over the core: :mod:`layerplan.mockup` lays the plan into a photo of the wall, and
the projector view only reads the plan's own layer SVGs. A bad upload or bad corners answer
400 with ``{"error": ...}``.
"""

from __future__ import annotations

import io

from flask import Blueprint, abort, current_app, jsonify, render_template, request, send_file


from . import forms, service

bp = Blueprint("wall", __name__)


def _finished(plan_id: str):
    # service.visible: a private plan's projector and mock-up pages are its owner's only
    record = service.visible(plan_id)
    if record is None or record.state != "done":
        abort(404, description=f"there is no finished plan {forms.clip(repr(plan_id))}")
    plan = service.stored_plan(plan_id)
    if plan is None:
        abort(404, description=f"plan {forms.clip(repr(plan_id))} has no plan.json")
    return record, plan


@bp.get("/plans/<plan_id>/project")
def project(plan_id: str):
    """Full-screen projector view: one layer at a time on black, its corners dragged onto the wall."""
    record, plan = _finished(plan_id)
    files = service.status(record)["files"]
    layers = [{"number": n, "svg": files.get(f"steps/{n:02d}.svg"), "brush_mm": layer.brush_width_mm,
               "strokes": len(layer.strokes)} for n, layer in enumerate(plan.layers, start=1)]
    return render_template("project.html", record=record, layers=[x for x in layers if x["svg"]],
                           wall=(plan.wall_width_mm, plan.wall_height_mm))


@bp.get("/plans/<plan_id>/site")
def site(plan_id: str):
    """The mock-up page: upload a photo of the wall, click its four corners, see the plan in it."""
    record, plan = _finished(plan_id)
    return render_template("site.html", record=record, layers=len(plan.layers))


def _bad(message: str, status: int = 400):
    response = jsonify(error=message)
    response.status_code = status
    return response


@bp.post("/plans/<plan_id>/site")
def site_mockup(plan_id: str):
    """``photo`` (a file) and ``corners`` (8 numbers, photo pixels) -> the mock-up PNG; ``step`` picks the
    wall after that step (0 the ground; default the finished picture)."""
    from layerplan.export import png_bytes
    from layerplan.mockup import mockup
    from layerplan.options import OPTIONS, OptionError
    from layerplan.raster import picture, render_indices

    _, plan = _finished(plan_id)
    upload = request.files.get("photo")
    if upload is None or not upload.filename:
        return _bad("choose a photo of the wall (field 'photo')")
    try:
        corners = OPTIONS["corners"].parse(request.form.get("corners", ""))
    except OptionError as exc:
        return _bad(exc.form_message("Wall corners"))
    step = request.form.get("step", "").strip()
    try:
        upto = len(plan.layers) if not step else int(step)
    except ValueError:
        return _bad(f"step must be a whole number from 0 to {len(plan.layers)}, got {forms.clip(repr(step))}")
    if not 0 <= upto <= len(plan.layers):
        return _bad(f"step must be a whole number from 0 to {len(plan.layers)}, got {upto}")
    try:
        # within the server's photo limits: pixels read from the header first, a few decodes at a time
        config = current_app.config
        photo = forms.decode_photo(upload.stream.read(), upload.filename, max_pixels=int(config["MAX_PHOTO_PIXELS"]),
                                   decoding=service.state().decodes, decode_wait_s=float(config["DECODE_WAIT_S"]))
        shot = mockup(picture(plan, render_indices(plan, upto_layer=upto)), photo, corners)
    except forms.RequestError as exc:
        return _bad(str(exc), getattr(exc, "status", 400))
    except ValueError as exc:  # not an image, or corners that do not make the wall's shape
        return _bad(str(exc))
    return send_file(io.BytesIO(png_bytes(shot)), mimetype="image/png", download_name=f"mockup-{plan_id}.png")
