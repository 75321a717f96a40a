"""JSON API. The pages use it too; the route names and fields below are a contract.

``POST /api/plans``                     multipart form -> 202 {"id", "url", ...}
``GET /api/plans``                      {"plans": [status, ...]} newest first
``GET /api/plans/<id>``                 {"id", "state", "progress", "message", "files", ...}
``DELETE /api/plans/<id>``              204
``GET /api/plans/<id>/files/<name>``    one of the plan's output files
``GET /api/kits``                       the brush kits offered on the start page

Errors are ``{"error": "<message>"}`` with 400, 404, 405, 413, 415 or 503.
"""

from __future__ import annotations

from flask import Blueprint, abort, current_app, jsonify, request, send_from_directory

from . import forms, service

bp = Blueprint("api", __name__, url_prefix="/api")


def _error(message: str, status: int):
    response = jsonify(error=message)
    response.status_code = status
    return response


def _record_or_404(plan_id: str):
    record = service.store().get(plan_id)
    if record is None:
        abort(404, description=f"no plan with id {plan_id!r}")
    return record


@bp.post("/plans")
def create_plan():
    try:
        plan_id = service.submit(request.form, request.files)
    except forms.RequestError as exc:
        return _error(str(exc), exc.status)
    except service.Busy as exc:
        response = _error(str(exc), 503)
        response.headers["Retry-After"] = "60"
        return response
    record = service.store().get(plan_id)
    body = service.status(record)
    response = jsonify(body)
    response.status_code = 202
    response.headers["Location"] = body["url"]
    return response


@bp.get("/plans")
def list_plans():
    limit = int(current_app.config["RECENT_PLANS"])
    return jsonify(plans=[service.status(r) for r in service.store().recent(limit)])


@bp.get("/plans/<plan_id>")
def plan_status(plan_id: str):
    response = jsonify(service.status(_record_or_404(plan_id)))
    response.headers["Cache-Control"] = "no-store"
    return response


@bp.delete("/plans/<plan_id>")
def delete_plan(plan_id: str):
    if not service.delete(plan_id):
        abort(404, description=f"no plan with id {plan_id!r}")
    return "", 204


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

