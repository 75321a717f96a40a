"""The layerplan web app: upload a photo, watch the plan being made, step through it, print it.

``create_app(test_config=None)`` builds the Flask app (after the Flask tutorial's factory
pattern). Configuration comes from the defaults below, then ``instance/config.py`` and
``LAYERPLAN_*`` environment variables, or from ``test_config`` when given.

Configuration keys
------------------
DATA_DIR
    Where plans live (SQLite database and a folder per plan); default the instance folder.
WORKERS
    Plans planned at the same time (worker processes); the rest wait in a queue.
MAX_QUEUED
    Plans waiting or being made, in all; beyond it new plans get 429 until the queue drains.
MAX_QUEUED_PER_OWNER
    The same for one owner (one browser, or one API token); 0 for no limit of its own.
MAX_CONTENT_LENGTH
    Largest request in bytes (the photo and the form); larger gets 413.
MAX_FORM_MEMORY_SIZE
    Largest text field of a form in bytes (Flask's own key); larger gets 413 naming that limit.
MAX_PHOTO_PIXELS
    Largest photo, width × height, read from its header before decoding; larger gets 413.
DECODES
    Photos decoded at the same time (a decoded photo holds about 3 bytes a pixel).
DECODE_WAIT_S
    How long a request waits for a decode slot before it gets 503, seconds.
MAX_PLAN_WORK
    Largest working pixels × paints × brushes of one plan; larger is refused up front (400); 0 for no limit.
JOB_TIMEOUT_S
    A plan running longer is stopped and marked failed with a message.
MAX_ATTEMPTS
    A plan whose worker dies (or that a server stop interrupts) is started again until it has
    been tried this often.
MAX_DATA_BYTES
    The data directory holds at most this much; over it new plans get 507; 0 for no limit.
RETENTION_DAYS
    Finished plans are deleted this many days after they finished; 0 keeps them for good.
HOUSEKEEPING_S
    How often old plans and kept photos are swept out, seconds.
ADMIN_TOKEN
    Optional: a visitor presenting this token (header ``X-Layerplan-Owner``, or signed in at
    ``/admin``) sees and deletes every plan. At least 16 characters.
OWNER_COOKIE_SECURE
    Send the owner cookie over HTTPS only (set it when a proxy serves the site over HTTPS).
JOB_RUNNER
    Optional factory ``f(app, store) -> JobRunner`` to plug in another job system.
UPLOAD_KEEP_S
    How long the photo of a refused form is kept for the next try, seconds.
UPLOAD_STASH_BYTES
    Kept photos hold at most this many bytes together; the oldest go first.

Every key can be set in the environment as ``LAYERPLAN_<KEY>`` (``LAYERPLAN_MAX_QUEUED=20``).
"""

from __future__ import annotations

import atexit
import fcntl
import logging
import os
import threading
from dataclasses import dataclass, field
from pathlib import Path

from flask import Flask, jsonify, render_template, request
from werkzeug.exceptions import HTTPException, InternalServerError

from .. import wording
from ..resources import static_dir, template_dir
from . import owners
from .forms import size_text
from .housekeeping import EVERY_S, RETENTION_DAYS, Housekeeper
from .jobs import MAX_ATTEMPTS, JobRunner, LocalProcessRunner, recover
from .store import PlanStore
from .uploads import KEEP_S, MAX_BYTES, UploadStash

log = logging.getLogger(__name__)

#: 25 MB: above a full-resolution phone JPEG (typically 3–12 MB), far below memory trouble
DEFAULT_MAX_CONTENT_LENGTH = 25_000_000
#: leave a core for the web server itself on small machines
DEFAULT_WORKERS = max(1, (os.cpu_count() or 2) // 2)
DEFAULT_MAX_QUEUED = 50
#: a class of 30 can each have a plan waiting and another being made
DEFAULT_MAX_QUEUED_PER_OWNER = 3
#: 50 megapixels: above phone photos (12–48 MP), about 150 MB once decoded
DEFAULT_MAX_PHOTO_PIXELS = 50_000_000
#: two decodes at once keep a burst of big uploads under about 300 MB of decoded photos
DEFAULT_DECODES = 2
#: 2 megapixels (the automatic pixel size's cap) × 32 paints × 4 brushes; the default plan is 64 million
DEFAULT_MAX_PLAN_WORK = 256_000_000
#: 20 minutes: a plan of the default size takes seconds to a minute or two on a small machine
DEFAULT_JOB_TIMEOUT_S = 1200.0
#: 10 GB for plans and photos (one large plan's files are about 70 MB)
DEFAULT_MAX_DATA_BYTES = 10_000_000_000
LOCK_NAME = "server.lock"
#: config keys that must be whole numbers >= 0 (0 means "no limit" where the docs say so)
_WHOLE_KEYS = ("MAX_QUEUED", "MAX_QUEUED_PER_OWNER", "MAX_PHOTO_PIXELS", "DECODES", "MAX_PLAN_WORK",
               "MAX_DATA_BYTES", "UPLOAD_STASH_BYTES", "MAX_ATTEMPTS", "WORKERS")
_POSITIVE_KEYS = ("MAX_PHOTO_PIXELS", "DECODES", "MAX_ATTEMPTS", "WORKERS")


@dataclass
class WebState:
    """What a running app holds: the store, the job runner and the data-dir lock."""

    store: PlanStore
    runner: JobRunner
    lock_file: object | None = None
    uploads: UploadStash | None = None
    #: held while a photo is decoded (config DECODES)
    decodes: threading.BoundedSemaphore = field(default_factory=lambda: threading.BoundedSemaphore(DEFAULT_DECODES))
    data_size: object = None
    housekeeper: Housekeeper | None = None

    def close(self, *, wait: bool = False) -> None:
        """Stop the runner and release the data directory (safe to call twice)."""
        if self.housekeeper is not None:
            self.housekeeper.stop()
            self.housekeeper = None
        self.runner.shutdown(wait=wait)
        if self.lock_file is not None:
            try:
                fcntl.flock(self.lock_file.fileno(), fcntl.LOCK_UN)
                self.lock_file.close()
            except (OSError, ValueError):
                pass
            self.lock_file = None


def _origin_of(url: str) -> str:
    """scheme://host[:port] of a URL, lower-case (the part browsers compare for same-origin)."""
    from urllib.parse import urlsplit

    parts = urlsplit(url)
    return f"{parts.scheme.lower()}://{parts.netloc.lower()}"


def _cross_site(sender: str):
    response = jsonify(error=f"refused: this request came from another site ({sender}); "
                             "plans can be submitted and deleted only from layerplan's own pages")
    response.status_code = 403
    return response


def create_app(test_config: dict | None = None, *, overrides: dict | None = None) -> Flask:
    """Build the web app.

    Parameters
    ----------
    test_config : dict, optional
        Configuration that replaces the instance file and environment (for tests).
    overrides : dict, optional, keyword-only
        Applied last, over either (``layerplan serve`` passes its options here).

    Returns
    -------
    flask.Flask
        With ``app.extensions["layerplan"]`` a :class:`WebState`; call
        ``app.extensions["layerplan"].close()`` to stop its workers.

    Raises
    ------
    RuntimeError
        If another running layerplan server already uses the data directory.
    """
    app = Flask(__name__, instance_relative_config=True,
                template_folder=str(template_dir()), static_folder=str(static_dir()))
    app.config.from_mapping(
        DATA_DIR=None,
        WORKERS=DEFAULT_WORKERS,
        MAX_QUEUED=DEFAULT_MAX_QUEUED,
        MAX_QUEUED_PER_OWNER=DEFAULT_MAX_QUEUED_PER_OWNER,
        MAX_CONTENT_LENGTH=DEFAULT_MAX_CONTENT_LENGTH,
        MAX_PHOTO_PIXELS=DEFAULT_MAX_PHOTO_PIXELS,
        DECODES=DEFAULT_DECODES,
        DECODE_WAIT_S=30.0,
        MAX_PLAN_WORK=DEFAULT_MAX_PLAN_WORK,
        JOB_TIMEOUT_S=DEFAULT_JOB_TIMEOUT_S,
        MAX_ATTEMPTS=MAX_ATTEMPTS,
        MAX_DATA_BYTES=DEFAULT_MAX_DATA_BYTES,
        RETENTION_DAYS=RETENTION_DAYS,
        HOUSEKEEPING_S=EVERY_S,
        ADMIN_TOKEN=None,
        OWNER_COOKIE_SECURE=False,
        JOB_START_METHOD=None,
        JOB_RUNNER=None,
        RECENT_PLANS=30,
        UPLOAD_KEEP_S=KEEP_S,
        UPLOAD_STASH_BYTES=MAX_BYTES,
    )
    if test_config is None:
        app.config.from_pyfile("config.py", silent=True)
        app.config.from_prefixed_env("LAYERPLAN")
    else:
        app.config.from_mapping(test_config)
    if overrides:
        app.config.from_mapping(overrides)

    _check_config(app.config)
    data_dir = Path(app.config["DATA_DIR"] or app.instance_path)
    data_dir.mkdir(parents=True, exist_ok=True)
    app.config["DATA_DIR"] = str(data_dir)
    lock_file = _lock_data_dir(data_dir)
    store = PlanStore(data_dir)
    # no worker runs yet: folders and records are made to agree before anything else
    _report_repairs(store.check_consistency())
    again = recover(store, max_attempts=int(app.config["MAX_ATTEMPTS"]))
    factory = app.config["JOB_RUNNER"]
    if factory is None:
        runner = LocalProcessRunner(data_dir, max_workers=int(app.config["WORKERS"]),
                                    timeout_s=float(app.config["JOB_TIMEOUT_S"]),
                                    start_method=app.config["JOB_START_METHOD"],
                                    max_attempts=int(app.config["MAX_ATTEMPTS"]))
    else:
        runner = factory(app, store)
    uploads = UploadStash(data_dir, keep_s=float(app.config["UPLOAD_KEEP_S"]),
                          max_bytes=int(app.config["UPLOAD_STASH_BYTES"]))
    from .service import DataSize

    state = WebState(store=store, runner=runner, lock_file=lock_file, uploads=uploads,
                     decodes=threading.BoundedSemaphore(int(app.config["DECODES"])), data_size=DataSize())
    state.housekeeper = Housekeeper(store, uploads, retention_days=float(app.config["RETENTION_DAYS"]),
                                    every_s=float(app.config["HOUSEKEEPING_S"]), on_sweep=state.data_size.forget)
    app.extensions["layerplan"] = state
    atexit.register(state.close)
    for plan_id in again:
        runner.submit(plan_id)

    from . import api, pages, swatches, wall

    app.register_blueprint(api.bp)
    app.register_blueprint(pages.bp)
    app.register_blueprint(swatches.bp)
    app.register_blueprint(wall.bp)
    _register_wording(app)
    app.register_error_handler(HTTPException, _http_error)
    app.register_error_handler(Exception, _unexpected_error)

    @app.before_request
    def _refuse_cross_site():
        # A page on another site can make a visitor's browser POST or DELETE here (a plain form needs no
        # script). Browsers name the page that sent such a request in Origin (or at least Referer) and say
        # cross-site in Sec-Fetch-Site; scripts and command-line clients send none, so they stay welcome.
        if request.method in ("GET", "HEAD", "OPTIONS"):
            return None
        if request.headers.get("Sec-Fetch-Site", "") == "cross-site":
            return _cross_site("cross-site")
        sender = request.headers.get("Origin") or request.headers.get("Referer")
        if sender == "null":  # sandboxed frames and some redirects hide where they came from
            return _cross_site("an opaque origin")
        if sender and _origin_of(sender) != _origin_of(request.host_url):
            return _cross_site(_origin_of(sender))
        return None

    @app.after_request
    def _headers(response):
        response.headers.setdefault("X-Content-Type-Options", "nosniff")
        response.headers.setdefault("Referrer-Policy", "same-origin")
        return owners.remember(response)

    return app


def _lenient(say, *, entry: bool = False):
    """A wording function as a template filter: a plan document read from disk may lack a figure (an older
    plan.json), and a page shows nothing for it rather than failing."""
    from collections.abc import Mapping

    def text(value, *args, **kwargs):
        if entry:
            if not isinstance(value, Mapping) or not isinstance(value.get("litres"), (int, float)):
                return ""
        elif not isinstance(value, (int, float)) or isinstance(value, bool):
            return ""
        return say(value, *args, **kwargs)

    text.__doc__ = say.__doc__
    return text


def _colour_name(lab) -> str:
    """:func:`layerplan.wording.colour_name` of a plan.json ``lab`` triple; "" when there is none."""
    if not isinstance(lab, (list, tuple)) or len(lab) != 3 or not all(isinstance(v, (int, float)) for v in lab):
        return ""
    return wording.colour_name(lab)


def _register_wording(app: Flask) -> None:
    """The wording module's functions as Jinja filters, so the pages say amounts as the printed plan does:
    ``{{ entry|amount(us) }}``, ``{{ entry|buy(us) }}``, ``{{ litres|volume(us) }}``, ``{{ m2|area(unit) }}``,
    ``{{ mm|wall_length(unit) }}``, ``{{ rate|coverage(us) }}``, ``{{ seconds|duration }}``; ``unit is us_units``."""
    filters = dict(
        amount=_lenient(wording.amount, entry=True),
        buy=_lenient(wording.buy, entry=True),
        volume=_lenient(wording.volume),
        area=_lenient(wording.area),
        wall_length=_lenient(wording.length),
        coverage=_lenient(wording.coverage),
        duration=_lenient(wording.duration),
        colour_name=_colour_name,
    )
    clash = sorted(set(filters) & set(app.jinja_env.filters))
    if clash:  # a name of Jinja's own (length, round…) would silently change every template using it
        raise RuntimeError(f"wording filter names clash with Jinja's: {', '.join(clash)}")
    app.jinja_env.filters.update(filters)
    app.jinja_env.tests["us_units"] = wording.is_us


def _check_config(config) -> None:
    """Refuse limits that cannot work, naming the key (they come from a file or the environment)."""
    for key in _WHOLE_KEYS:
        value = config.get(key)
        if isinstance(value, bool) or not isinstance(value, int) or value < (1 if key in _POSITIVE_KEYS else 0):
            least = 1 if key in _POSITIVE_KEYS else 0
            raise RuntimeError(f"{key} must be a whole number >= {least}, got {value!r}")
    for key in ("RETENTION_DAYS", "DECODE_WAIT_S", "JOB_TIMEOUT_S", "HOUSEKEEPING_S", "UPLOAD_KEEP_S"):
        value = config.get(key)
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= (0 if key == "RETENTION_DAYS"
                                                                                           else 1e-9):
            raise RuntimeError(f"{key} must be a number > 0{' (or 0)' if key == 'RETENTION_DAYS' else ''}, "
                               f"got {value!r}")
    if config.get("ADMIN_TOKEN") is not None:
        config["ADMIN_TOKEN"] = str(config["ADMIN_TOKEN"])  # the environment's "1234…" reads as a number
    owners.check_admin_token(config.get("ADMIN_TOKEN"))


def _report_repairs(report: dict[str, list[str]]) -> None:
    """One log line per kind of repair the start's consistency check made."""
    if report["removed_folders"]:
        log.warning("data directory: removed %d plan folders that had no record (%s)",
                    len(report["removed_folders"]), ", ".join(report["removed_folders"][:10]))
    if report["records_without_folder"]:
        log.warning("data directory: %d plans had lost their folder and are marked failed (%s)",
                    len(report["records_without_folder"]), ", ".join(report["records_without_folder"][:10]))
    if report["partial_files"]:
        log.info("data directory: removed %d files left half-written by a stopped worker",
                 len(report["partial_files"]))


def _lock_data_dir(data_dir: Path):
    f = open(data_dir / LOCK_NAME, "a+")
    try:
        fcntl.flock(f.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
    except BlockingIOError:
        f.close()
        raise RuntimeError(f"another layerplan server is using the data directory {data_dir}; "
                           "stop it or give another --data-dir") from None
    return f


def _wants_json() -> bool:
    return request.path.startswith("/api/")


def _http_error(exc: HTTPException):
    message = exc.description
    if message == type(exc).description:  # Werkzeug's stock wording: use our shorter one
        message = _MESSAGES.get(exc.code, message)
    if exc.code == 413:
        message = too_large_message()
    if _wants_json():
        response = jsonify(error=message)
        response.status_code = exc.code or 500
        if exc.code == 405 and exc.valid_methods:
            response.headers["Allow"] = ", ".join(exc.valid_methods)
        return response
    return render_template("error.html", code=exc.code, message=message), exc.code


def too_large_message() -> str:
    """Which limit a 413 hit: the whole request's, or one text field's (Werkzeug raises both the same way)."""
    limit = request.max_content_length
    length = request.content_length
    field_limit = request.max_form_memory_size
    if limit and (length is None or length > limit):
        return f"the upload is too large: at most {size_text(limit)} in all (the photo and the form)"
    if field_limit:
        return (f"a text field of the form is too large: at most {size_text(field_limit)} per text field "
                f"(an edited inventory is one; a longer inventory can be sent as a file)")
    return "the request is too large"


def _unexpected_error(exc: Exception):
    log.exception("unexpected error on %s %s", request.method, request.path)
    return _http_error(InternalServerError())


_MESSAGES = {
    404: "not found",
    405: "method not allowed here",
    500: "internal error: the server could not complete the request (it keeps running; see its log)",
}
