"""What the API and the pages share: submitting, describing and deleting plans.

Every limit of a shared server is checked here, cheapest first, before the photo is
decoded: the queue (per owner and in all), the data directory's size, then the photo's
pixel count from its header, then the decode itself (at most ``DECODES`` at a time),
then the plan's size (pixels × paints × brushes).
"""

from __future__ import annotations

import logging
import threading
import time
from typing import Any

from flask import current_app, url_for

from layerplan.plan import Plan

from . import forms, owners
from .store import WEB_KEY, DiskFull, PlanRecord, PlanStore, is_disk_full

log = logging.getLogger(__name__)


class Refused(Exception):
    """A request the server turns down for its own reasons (not the request's fault); ``status`` is the
    HTTP status, ``retry_after`` seconds to wait (or None)."""

    status = 503
    retry_after: int | None = 60

    def __init__(self, message: str):
        super().__init__(message)


class Busy(Refused):
    """Too many plans waiting, in all or from this owner; try again later (HTTP 429)."""

    status = 429


class StorageFull(Refused):
    """The data directory is over its size limit or its disk is full (HTTP 507)."""

    status = 507
    retry_after = 600


class Forbidden(Refused):
    """Only the plan's owner (or the admin) may do this (HTTP 403)."""

    status = 403
    retry_after = None


class DataSize:
    """The data directory's size, measured at most every ``every_s`` seconds (walking it costs)."""

    def __init__(self, every_s: float = 30.0):
        self.every_s = every_s
        self._lock = threading.Lock()
        self._measured: tuple[float, int] | None = None

    def bytes(self, store: PlanStore) -> int:
        with self._lock:
            now = time.monotonic()
            if self._measured is None or now - self._measured[0] > self.every_s:
                self._measured = (now, store.size_bytes())
            return self._measured[1]

    def grew(self, n_bytes: int) -> None:
        """Count bytes just written, until the next measurement."""
        with self._lock:
            if self._measured is not None:
                self._measured = (self._measured[0], self._measured[1] + int(n_bytes))

    def forget(self) -> None:
        with self._lock:
            self._measured = None


def state():
    return current_app.extensions["layerplan"]


def store() -> PlanStore:
    return state().store


def uploads():
    """The :class:`~layerplan.web.uploads.UploadStash` of photos kept between tries of the form."""
    return state().uploads


def check_room() -> None:
    """Refuse a new plan when the queue or the data directory is full (cheap: before the photo is read).

    Raises
    ------
    Busy
        ``MAX_QUEUED_PER_OWNER`` of this owner's plans, or ``MAX_QUEUED`` in all, are waiting or running.
    StorageFull
        The data directory holds ``MAX_DATA_BYTES`` or more.
    """
    config = current_app.config
    who = owners.visitor()
    mine = int(config["MAX_QUEUED_PER_OWNER"])
    if not who.admin and mine and store().count_queued(owner=who.key) >= mine:
        raise Busy(f"you already have {mine} plans waiting or being made (this server's limit per person); "
                   "try again when one is ready")
    limit = int(config["MAX_QUEUED"])
    if store().count_queued() >= limit:
        raise Busy(f"{limit} plans are already waiting or being made (this server's limit); "
                   "try again in a few minutes")
    cap = int(config["MAX_DATA_BYTES"] or 0)
    if cap and state().data_size.bytes(store()) >= cap:
        raise StorageFull(f"the server's storage for plans is full (its limit is {forms.size_text(cap)}); "
                          "delete some of your plans, or ask whoever runs the server to make room")


def submit(form, files, *, photo: tuple[bytes, str] | None = None) -> str:
    """Check a plan request, store it and queue it; return the new plan's id.

    ``photo`` (bytes, original name) replaces the form's ``image`` file when given. The
    whole settings object is built and checked here (:func:`forms.parse_plan_request`), so
    a queued plan only ever holds values the planner accepts.

    Raises
    ------
    forms.RequestError
        Bad photo or settings (4xx).
    Busy
        The queue is full (429).
    StorageFull
        The data directory is over its limit or its disk is full (507).
    """
    check_room()
    config = current_app.config
    req = forms.parse_plan_request(form, files, photo=photo, max_pixels=int(config["MAX_PHOTO_PIXELS"]),
                                   decoding=state().decodes, decode_wait_s=float(config["DECODE_WAIT_S"]),
                                   max_work=int(config["MAX_PLAN_WORK"] or 0))
    settings = req.settings.to_dict()
    settings[WEB_KEY] = {"output": req.output_options, "wall_mm": list(req.wall_mm), "mm_per_px": req.mm_per_px}
    who = owners.visitor()
    private = forms.switch_on(form, "private")
    try:
        plan_id = store().create(settings, req.image_bytes, source_name=req.source_name,
                                 inventory_text=req.inventory_text, owner=who.key, private=private)
    except DiskFull as exc:
        state().data_size.forget()
        log.warning("plan refused: %s", exc.strerror)
        raise StorageFull(f"{exc.strerror}; ask whoever runs the server to free some space") from None
    except Exception as exc:
        if is_disk_full(exc):
            log.warning("plan refused: the data directory's disk is full (%s)", exc)
            raise StorageFull("the server's disk is full: the plan could not be stored; ask whoever runs "
                              "the server to free some space") from None
        raise
    state().data_size.grew(len(req.image_bytes))
    state().runner.submit(plan_id)
    return plan_id


def visible(plan_id: str) -> PlanRecord | None:
    """The plan's record when the current visitor may view it (a private plan is someone else's: None)."""
    record = store().get(plan_id)
    if record is None or not owners.can_see(record):
        return None
    return record


def recent(limit: int) -> list[PlanRecord]:
    """The current visitor's plans, newest first (everyone's for the admin)."""
    return store().recent(limit, owner=owners.list_owner())


def delete(plan_id: str) -> bool:
    """Stop the plan if it is queued or running, then remove it. False if there was none (or it is
    someone else's private plan, which this visitor cannot know of).

    Raises
    ------
    Forbidden
        The plan is someone else's.
    """
    if _owned(plan_id, "only the person who made this plan can delete it (from the browser it was made in)") is None:
        return False
    state().runner.cancel(plan_id)
    state().data_size.forget()
    return store().delete(plan_id)


def set_private(plan_id: str, private: bool) -> bool:
    """Make a plan private (only its owner and the admin see it) or shareable again; False if none.

    Raises
    ------
    Forbidden
        The plan is someone else's.
    """
    if _owned(plan_id, "only the person who made this plan can change who sees it") is None:
        return False
    return store().set_private(plan_id, private)


def _owned(plan_id: str, refusal: str) -> PlanRecord | None:
    """The plan's record if this visitor may change it, None if they cannot see it; Forbidden (``refusal``)
    when it is someone else's plan they can see."""
    record = visible(plan_id)
    if record is not None and not owners.owns(record):
        raise Forbidden(refusal)
    return record


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
        "private": record.private,
        "yours": owners.owns(record),
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
