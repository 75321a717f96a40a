"""What the API and the pages share: submitting, describing and deleting plans."""

from __future__ import annotations

from typing import Any

from flask import current_app, url_for

from layerplan.plan import Plan

from . import forms
from .store import WEB_KEY, PlanRecord, PlanStore


class Busy(Exception):
    """Too many plans waiting; try again later (HTTP 503)."""


def state():
    return current_app.extensions["layerplan"]


def store() -> PlanStore:
    return state().store


def uploads():
    """The :class:`~layerplan.web.uploads.UploadStash` of photos kept between tries of the form."""
    return state().uploads


def submit(form, files, *, photo: tuple[bytes, str] | None = None) -> str:
    """Check a plan request, store it and queue it; return the new plan's id.

    ``photo`` (bytes, original name) replaces the form's ``image`` file when given.

    Raises
    ------
    forms.RequestError
        Bad photo or settings (4xx).
    Busy
        The queue is full.
    """
    req = forms.parse_plan_request(form, files, photo=photo)
    limit = int(current_app.config["MAX_QUEUED"])
    if store().count_in_state("queued") >= limit:
        raise Busy(f"{limit} plans are already waiting; try again in a few minutes")
    settings = req.settings.to_dict()
    settings[WEB_KEY] = {"output": req.output_options, "wall_mm": list(req.wall_mm), "mm_per_px": req.mm_per_px}
    plan_id = store().create(settings, req.image_bytes, source_name=req.source_name,
                             inventory_text=req.inventory_text)
    state().runner.submit(plan_id)
    return plan_id


def delete(plan_id: str) -> bool:
    """Stop the plan if it is queued or running, then remove it. False if there was none."""
    if store().get(plan_id) is None:
        return False
    state().runner.cancel(plan_id)
    return store().delete(plan_id)


def status(record: PlanRecord) -> dict[str, Any]:
    """The API's description of one plan."""
    files = {}
    if record.state == "done":
        files = {name: url_for("api.plan_file", plan_id=record.id, name=name)
                 for name in store().output_files(record.id)}
    return {
        "id": record.id,
        "state": record.state,
        "progress": round(record.progress, 4),
        "message": record.message,
        "attempts": record.attempts,
        "files": files,
        "url": url_for("api.plan_status", plan_id=record.id),
        "page": url_for("pages.plan_page", plan_id=record.id),
        "source_name": record.source_name,
        "created_at": record.created_at,
        "finished_at": record.finished_at,
        "settings": record.settings,
    }


def stored_plan(plan_id: str) -> Plan | None:
    """The plan its export wrote (plan.json, read by :meth:`Plan.from_json`); None if not there (yet).

    Raises
    ------
    ValueError
        If the stored plan.json cannot be read as a plan (the message says why).
    """
    path = store().out_dir(plan_id) / "plan.json"
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None
    except (OSError, UnicodeDecodeError) as exc:
        raise ValueError(f"its plan.json cannot be read: {exc}") from exc
    return Plan.from_json(text)
