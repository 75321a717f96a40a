"""JSON API. The pages use it too; the route names and fields below are a contract.

``POST /api/plans``                     multipart form -> 202 {"id", "url", ...}
``GET /api/plans``                      {"plans": [status, ...]} newest first
``GET /api/plans/<id>``                 {"id", "state", "progress", "message", "files", ...}
``DELETE /api/plans/<id>``              204 (403 unless it is yours)
``PATCH /api/plans/<id>``               {"private": true|false} -> the plan's status (403 unless it is yours)
``GET /api/plans/<id>/files/<name>``    one of the plan's output files
``GET /api/kits``                       the brush kits offered on the start page

Fields of ``POST /api/plans`` (multipart/form-data; the start page's form sends the same)
-------------------------------------------------------------------------------------------
``image``          the photo file (JPEG, PNG, WebP, TIFF); required
``wall_width``     width of the surface in ``unit``; required unless ``wall`` is given
``wall_height``    height in ``unit``; blank or absent follows the photo's shape
``unit``           m, cm, mm, ft or in (default m)
``wall``           instead of the three above: one text such as ``4x2.5m``
``kit``            instead of ``brushes``: a brush kit id from ``GET /api/kits``
``inventory``      default, upload (with file ``inventory_file``) or edit (with ``inventory_text``)
``private``        1 to make the plan private at once (only its owner and the admin see it)

Owners: every response to a client that sent no owner token carries a new one in the
``X-Layerplan-Owner`` header (and a cookie); send it back in that header to list, delete
and change your plans. ``GET /api/plans`` lists only your plans (all of them for the admin
token). A plan that is not private can be viewed by anyone who has its id.

The options, as ``layerplan plan`` takes them (made from :mod:`layerplan.options`; a blank or
absent field takes the default). Shares are ``15%`` or ``0.15``; lengths carry a unit (plain
numbers are mm):

<!-- options table: made by `python -m layerplan.options --write`; edit layerplan/options.py -->
``wall``            size of the painted surface; WxH with a unit (m, cm, mm, ft, in): 4x2.5m, 12x8ft; or the
                    width alone (``--wall``, default 3 m wide, height from the photo)
``fit``             cover fills the surface and crops the overhang; contain fits the whole photo inside and
                    pads with the ground paint; cover or contain (``--fit``, default cover)
``paints``          number of paints; whole number from 2 to 32 (``--paints``, default 8)
``brushes``         brush widths, one layer each, widest first; widths in mm, comma-separated, or with units
                    (4in, 2in); at most 8, each from 1 to 1000 mm (``--brushes``, default 100,50,25,12)
``pixel_mm``        wall size of one working pixel; > 0 mm (``--pixel-mm``, default the narrowest brush spans
                    3 px, at most 2 megapixels)
``seed``            seed for every random choice: same inputs and seed, same plan; whole number from 0 to
                    4294967295 (``--seed``, default 0)
``stroke_cost``     colour error (ΔE00 per brush-width square) a stroke must remove to be painted; lower for
                    more detail, higher for fewer strokes; from 0 to 1000 (``--stroke-cost``, default 5.5)
``reach``           side of a work zone, what you paint from one ladder or lift position: each paint's strokes
                    are ordered zone by zone, top of the wall first; a length with a unit: 50cm, 2ft, 1/2m
                    (plain numbers are mm); from 100 mm to 100 m (``--reach``, default 2m)
``free_palette``    keep the photo's own colours instead of the colours the recipes will mix to; on or off
                    (``--free-palette``, default off)
``mix_paints``      most inventory paints in one mix; whole number from 1 to 4 (``--mix-paints``, default 3)
``max_parts``       whole parts of a mix add up to at most this; whole number from 1 to 30 (``--max-parts``,
                    default 10)
``tolerance``       a colour counts as mixable within this CIEDE2000; from 0 to 100 (``--tolerance``, default
                    3)
``coverage``        spreading rate of one coat (check your tins); from 0.5 to 100 m²/L (``--coverage``,
                    default 10)
``ground_coats``    coats of the ground; whole number from 0 to 10 (``--ground-coats``, default 2)
``stroke_coats``    least coats of any stroke; light over dark, and bright reds and yellows, get more by
                    themselves; whole number from 1 to 10 (``--stroke-coats``, default 1)
``waste``           extra paint to buy for spills and touch-ups; 0.15 or 15% (a fraction or a percentage)
                    (``--waste``, default 15%)
``grid``            transfer-grid square, drawn on the print and the overlay; a length with a unit: 50cm, 2ft,
                    1/2m (plain numbers are mm); from 1 mm to 100 m (``--grid``, default 50cm, or 2ft for
                    walls in ft or in; 10cm or 4in on small boards; at most 200 squares along the longest
                    side)
``paper``           paper the printed plan is laid out for; a4 and letter give sheets that print on either, as
                    do a3 and tabloid (bigger enlargements, fewer sheets); a4 or letter or a3 or tabloid
                    (``--paper``, default a4)
``enlargements``    most enlargement sheets of one layer in the printed plan (the squares with the most areas
                    are kept); 0 for none; whole number from 0 to 400 (``--enlargements``, default 24)
``crew``            painters sharing the work; each takes whole columns of work zones, so no two share a
                    ladder (the schedule sheet says who paints where); whole number from 1 to 50 (``--crew``,
                    default 1)
``day_hours``       painting hours a painter puts in a day at the wall; > 0 and at most 24 h (``--day-hours``,
                    default 6)
``drying``          hours each ground coat and layer dries before the next goes on (acrylics: 2-4 h at 20 °C,
                    longer when cold or damp); from 0 to 336 h (``--drying-hours``, default 4)
``labour_rate``     pay for one painter-hour at the wall, in the inventory's currency: the schedule adds the
                    labour cost; >= 0 (``--labour-rate``, default none)
``openings``        a window, door or vent: the rectangle's top-left corner from the wall's top-left, then its
                    width and height; not painted, not charged for; X,Y,W,H with a unit: 1.0,1.2,0.9,1.8m
                    (repeat the flag; in the form one a line) (``--opening``, default none)
``wall_colour``     the colour the wall is painted already: when a paint of the plan matches it, that paint's
                    ground coats are not bought; #rrggbb, or CIELAB L,a,b (``--wall-colour``, default not
                    known)
``panels``          split the design into numbered panels or cloth strips of this size, painted off the wall:
                    panels.html gives each its sheet and a key map; W,H with a unit: 1.5,1.2m (``--panels``,
                    default none (painted on the wall))
``panel_overlap``   overlap of neighbouring panels, to glue or trim; a length with a unit: 50cm, 2ft, 1/2m
                    (plain numbers are mm) (``--panel-overlap``, default 5cm)
``surface``         a named sheet or board instead of a wall size, turned to follow the photo: small brushes,
                    the classroom paint set and amounts in mL follow; a4 or a3 or a2 or letter or tabloid or
                    board-8x10in or board-9x12in or board-11x14in or board-24x30cm or board-30x40cm
                    (``--surface``, default none (the wall size))
``students``        students painting the plan, one sheet each: the plan adds a preparation sheet, one step
                    sheet per layer and a teacher's sheet; whole number from 1 to 500 (``--students``, default
                    no class)
``spares``          spare sheets on top of one per student, for do-overs and latecomers; 0.15 or 15% (a
                    fraction or a percentage) (``--spares``, default 10%)
``period_minutes``  length of a class period; the teacher's sheet splits the layers into periods; from 10 to
                    240 min (``--period-minutes``, default 45)
``paint_set``       the built-in set to mix from when no inventory is given: classroom is a primary triad with
                    black and white; basic or classroom (``--paint-set``, default classroom on a sheet or
                    board, else basic)
``simple_mixes``    plan only with stock paints and two-paint mixes students can make (at most 4 parts); on or
                    off (``--simple-mixes``, default off)
``value_study``     paint in this many greys mixed from the set's black and white, evenly spaced in lightness,
                    with a value scale to paint first; 0 for colour; whole number from 0 to 10
                    (``--value-study``, default 0)
<!-- end of options table -->

Errors are ``{"error": "<message>"}`` with 400, 403, 404, 405, 413, 415, 429 (too many plans
waiting: yours or in all; ``Retry-After``), 503 (photos being read: try again) or 507 (the
server's storage is full). A refused plan
request also carries ``"field"``: the form field at fault (or null); its message names the
field by the label the start page gives it (``Width``, ``Max parts per mix``, ...).
"""

from __future__ import annotations

from flask import Blueprint, abort, current_app, jsonify, request, send_from_directory

from . import forms, service

bp = Blueprint("api", __name__, url_prefix="/api")


def _error(message: str, status: int, **more):
    response = jsonify(error=message, **more)
    response.status_code = status
    return response


def _record_or_404(plan_id: str):
    record = service.visible(plan_id)
    if record is None:
        abort(404, description=f"no plan with id {forms.clip(repr(plan_id))}")
    return record


def _refused(exc: service.Refused):
    response = _error(str(exc), exc.status)
    if exc.retry_after:
        response.headers["Retry-After"] = str(exc.retry_after)
    return response


@bp.post("/plans")
def create_plan():
    try:
        plan_id = service.submit(request.form, request.files)
    except forms.RequestError as exc:
        current_app.logger.info("plan request refused (%s): %s", exc.field or exc.status, exc)
        response = _error(str(exc), exc.status, field=exc.field)
        if exc.status == 503:
            response.headers["Retry-After"] = "30"
        return response
    except service.Refused as exc:
        current_app.logger.info("plan request refused (%s): %s", exc.status, exc)
        return _refused(exc)
    record = service.store().get(plan_id)
    body = service.status(record)
    response = jsonify(body)
    response.status_code = 202
    response.headers["Location"] = body["url"]
    return response


@bp.get("/plans")
def list_plans():
    limit = int(current_app.config["RECENT_PLANS"])
    return jsonify(plans=[service.status(r) for r in service.recent(limit)])


@bp.get("/plans/<plan_id>")
def plan_status(plan_id: str):
    response = jsonify(service.status(_record_or_404(plan_id)))
    response.headers["Cache-Control"] = "no-store"
    return response


@bp.delete("/plans/<plan_id>")
def delete_plan(plan_id: str):
    try:
        gone = service.delete(plan_id)
    except service.Forbidden as exc:
        return _refused(exc)
    if not gone:
        abort(404, description=f"no plan with id {forms.clip(repr(plan_id))}")
    return "", 204


@bp.patch("/plans/<plan_id>")
def change_plan(plan_id: str):
    body = request.get_json(silent=True) if request.is_json else request.form.to_dict()
    if not isinstance(body, dict) or "private" not in body:
        return _error('send {"private": true} or {"private": false}', 400, field="private")
    value = body["private"]
    private = value if isinstance(value, bool) else forms.switch_on({"private": str(value)}, "private")
    try:
        found = service.set_private(plan_id, private)
    except service.Forbidden as exc:
        return _refused(exc)
    if not found:
        abort(404, description=f"no plan with id {forms.clip(repr(plan_id))}")
    return jsonify(service.status(service.store().get(plan_id)))


@bp.get("/plans/<plan_id>/files/<path:name>")
def plan_file(plan_id: str, name: str):
    record = _record_or_404(plan_id)
    if record.state != "done":
        abort(404, description=f"plan {plan_id} is {record.state}; its files exist once it is done")
    # only names the export wrote are served: no path tricks reach anything else
    if name not in service.store().output_files(plan_id):
        abort(404, description=f"plan {plan_id} has no file {name!r}")
    download = request.args.get("download") == "1"
    response = send_from_directory(service.store().out_dir(plan_id), name, as_attachment=download,
                                   download_name=f"layerplan-{plan_id}-{name.replace('/', '-')}")
    response.headers["Cache-Control"] = "private, max-age=3600"
    return response


@bp.get("/kits")
def kits():
    return jsonify(kits=[{"id": k, "label": v["label"], "brushes_mm": list(v["brushes_mm"])}
                         for k, v in forms.BRUSH_KITS.items()])

