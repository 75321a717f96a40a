"""HTML pages: the start page (upload form and recent plans), a plan's progress and its result."""

from __future__ import annotations

import dataclasses
import io
import math
import time
from typing import Any

from flask import (Blueprint, abort, current_app, redirect, render_template, request, send_file,
                   url_for)
from PIL import Image
from werkzeug.exceptions import RequestEntityTooLarge

import logging

from layerplan import caveats, options, quantities, wording
from layerplan.export import EXPORTS
from layerplan.plan import Plan
from layerplan.settings import Settings

from . import forms, owners, service
from .store import WEB_KEY

bp = Blueprint("pages", __name__)
log = logging.getLogger(__name__)

_S = Settings()
#: the recipe and quantity options the form starts with: each option's own default, from the one spec
#: (grid empty: the sheets choose the square from the wall's size and unit)
OPTION_DEFAULTS = {k: v for k, v in options.form_defaults().items()
                   if k in ("mix_paints", "max_parts", "tolerance", "stroke_cost", "coverage", "ground_coats",
                            "stroke_coats", "waste", "grid", "reach", "paper", "enlargements")}
#: what the start page's form holds before anyone types
FORM_DEFAULTS = {"wall_width": "3", "wall_height": "", "unit": "m", "paints": "8", "kit": forms.DEFAULT_KIT,
                 "brushes": "", "fit": "cover", "seed": "0", "pixel_mm": "", "inventory": "default",
                 "inventory_text": "", "free_palette": "", "openings": "", "wall_colour": "",
                 "panels": "", "panel_overlap": "5cm", **OPTION_DEFAULTS,
                 **forms.CLASSROOM_DEFAULTS}
#: a typed value longer than this (characters) is not put back into the re-shown form
MAX_REFILL = 1000
#: mimetypes of the photo formats we accept, by Pillow format id
_PHOTO_TYPES = {"JPEG": "image/jpeg", "MPO": "image/jpeg", "PNG": "image/png", "WEBP": "image/webp",
                "TIFF": "image/tiff"}


def _start_page(values: dict[str, str] | None = None, error: str | None = None, status: int = 200, *,
                error_field: str | None = None, kept: dict[str, str] | None = None):
    merged = dict(FORM_DEFAULTS)
    if values:
        # what was typed comes back for correcting, unless it is kilobytes no field needs
        merged.update({k: v for k, v in values.items()
                       if k in FORM_DEFAULTS and (len(v) <= MAX_REFILL or k == "inventory_text")})
    # options the painter changed open the "more options" part
    changed = any(merged.get(k, "").strip() != v for k, v in OPTION_DEFAULTS.items())
    changed = changed or merged["seed"] not in ("", "0") or bool(merged["pixel_mm"] or merged["free_palette"])
    limit = int(current_app.config["RECENT_PLANS"])
    recent = [{"record": r, "summary": plan_summary(r.settings)} for r in service.recent(limit)]
    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    max_size = forms.size_text(limit) if limit else ""
    return render_template("start.html", values=merged, error=error, error_field=error_field, kept=kept,
                           more_open=changed or error_field in OPTION_DEFAULTS, recent=recent,
                           admin=owners.visitor().admin,
                           kits=forms.BRUSH_KITS, labels=forms.LABELS, limits=_limits(),
                           units=forms.UNIT_CHOICES, max_size=max_size, inventory=_inventory_view(),
                           classroom=forms.CLASSROOM_OPTIONS, choice_labels=forms.CHOICE_LABELS), status


def _limits() -> dict[str, Any]:
    return {"max_mix_paints": forms.MAX_MIX_PAINTS, "max_parts": forms.MAX_PARTS,
            "max_tolerance": f"{forms.MAX_TOLERANCE_DE:g}"}


def _inventory_view() -> dict[str, Any]:
    """The default inventory for the form: its paints and its TOML text (to start an edited copy from)."""
    from importlib import resources

    from layerplan import inventory

    text = resources.files("layerplan").joinpath("data", inventory.DEFAULT_INVENTORY_NAME).read_text("utf-8")
    return {"default": inventory.default_inventory().to_list(), "default_text": text}


@bp.get("/")
def start():
    return _start_page()


@bp.post("/plans")
def create():
    try:
        form, files = request.form, request.files
    except RequestEntityTooLarge:
        from . import too_large_message

        whole = request.content_length is None or request.content_length > (request.max_content_length or 0)
        return _start_page(None, too_large_message(), 413, error_field="image" if whole else None)
    stash = service.uploads()
    token = (form.get("upload_token") or "").strip()
    upload = files.get("image")
    photo = None
    try:
        if upload is not None and upload.filename:  # a newly chosen photo replaces a kept one
            stash.discard(token)
            token = ""
            photo = forms.read_photo(files)
        elif token:
            photo = stash.get(token)
            if photo is None:
                token = ""
                raise forms.RequestError("the photo chosen earlier is no longer kept (photos wait an hour); "
                                         "choose it again", field="image")
        else:
            photo = forms.read_photo(files)
        plan_id = service.submit(form, files, photo=photo)
    except (forms.RequestError, service.Refused) as exc:
        status = exc.status
        field = getattr(exc, "field", None)
        log.info("plan form refused (%s): %s", field or status, exc)
        kept = None
        if photo is not None and field != "image" and forms.looks_like_photo(photo[0]):
            token = token or stash.put(*photo)  # so the next try need not choose the photo again
            if token:
                kept = {"token": token, "name": photo[1] or "the photo",
                        "url": url_for("pages.kept_photo", token=token)}
        elif token:
            stash.discard(token)
        response = _start_page(form.to_dict(), str(exc), status, error_field=field, kept=kept)
        return response
    if token:
        stash.discard(token)
    return redirect(url_for("pages.plan_page", plan_id=plan_id), code=303)


@bp.get("/kept-photo/<token>")
def kept_photo(token: str):
    """The photo kept from a refused try of the form (its token is 128 random bits)."""
    kept = service.uploads().get(token)
    if kept is None:
        abort(404, description="that photo is no longer kept")
    return _photo_response(kept[0], max_age=0)


@bp.app_context_processor
def _server_limits() -> dict[str, Any]:
    days = current_app.config.get("RETENTION_DAYS") or 0
    return {"retention_days": f"{float(days):g}" if days else None}


def _no_plan(plan_id: str):
    abort(404, description=f"there is no plan {forms.clip(repr(plan_id))} (it may have been deleted)")


@bp.get("/plans/<plan_id>")
def plan_page(plan_id: str):
    record = service.visible(plan_id)
    if record is None:
        _no_plan(plan_id)
    view: dict[str, Any] = {"record": record, "status": service.status(record),
                            "summary": plan_summary(record.settings)}
    if record.state == "done":
        try:
            plan = service.stored_plan(plan_id)
            if plan is None:
                raise ValueError("its plan.json is missing from the data directory")
            view.update(_plan_view(plan, view["status"]["files"]))
            return render_template("plan.html", **view)
        except Exception as exc:  # noqa: BLE001 - a stored plan, whatever it holds, must not break its page
            # the plan's own files are broken, not the request: say so, and keep the page to delete it
            log.warning("plan %s: its page cannot show the stored plan: %s: %s", plan_id, type(exc).__name__,
                        forms.clip(str(exc), total=300))
            reason = forms.clip(str(exc), total=300) if isinstance(exc, ValueError) else "it holds values out of range"
            view = {k: view[k] for k in ("record", "status", "summary")}
            view["plan_error"] = f"The stored plan cannot be shown: {reason}. Delete it and make it again."
            return render_template("plan.html", **view), 500
    return render_template("plan.html", **view)


@bp.post("/plans/<plan_id>/delete")
def delete(plan_id: str):
    try:
        gone = service.delete(plan_id)
    except service.Forbidden as exc:
        abort(403, description=str(exc))
    if not gone:
        abort(404, description=f"there is no plan {forms.clip(repr(plan_id))} (it may have been deleted already)")
    return redirect(url_for("pages.start"), code=303)


@bp.post("/plans/<plan_id>/private")
def make_private(plan_id: str):
    """The plan page's switch: private (only its owner sees it) or viewable by anyone with the link."""
    try:
        found = service.set_private(plan_id, forms.switch_on(request.form, "private"))
    except service.Forbidden as exc:
        abort(403, description=str(exc))
    if not found:
        _no_plan(plan_id)
    return redirect(url_for("pages.plan_page", plan_id=plan_id), code=303)


@bp.route("/admin", methods=["GET", "POST"])
def admin():
    """Signing in with the admin token (config ADMIN_TOKEN): this browser then sees and deletes every plan."""
    from .owners import COOKIE

    admin_token = current_app.config.get("ADMIN_TOKEN")
    if not admin_token:
        abort(404, description="this server has no admin token set (ADMIN_TOKEN)")
    if request.method == "GET":
        return render_template("admin.html", signed_in=owners.visitor().admin, error=None)
    if forms.switch_on(request.form, "sign_out"):
        response = redirect(url_for("pages.start"), code=303)
        response.delete_cookie(COOKIE, path="/")
        return response
    import hmac

    given = (request.form.get("token") or "").strip()
    if not hmac.compare_digest(given.encode(), str(admin_token).encode()):
        log.warning("admin sign-in refused from %s", request.remote_addr)
        return render_template("admin.html", signed_in=False, error="that is not the admin token"), 403
    response = redirect(url_for("pages.start"), code=303)
    secure = bool(current_app.config.get("OWNER_COOKIE_SECURE")) or request.is_secure
    response.set_cookie(COOKIE, given, max_age=12 * 3600, httponly=True, samesite="Strict", secure=secure, path="/")
    return response


@bp.get("/plans/<plan_id>/photo")
def photo(plan_id: str):
    if service.visible(plan_id) is None:
        _no_plan(plan_id)
    path = service.store().upload_path(plan_id)
    try:
        data = path.read_bytes()
    except OSError:
        abort(404, description="the uploaded photo is not available")
    return _photo_response(data, max_age=3600)


def _photo_response(data: bytes, *, max_age: int):
    try:
        with Image.open(io.BytesIO(data)) as img:
            mimetype = _PHOTO_TYPES.get(img.format, "application/octet-stream")
    except (OSError, ValueError):
        abort(404, description="the uploaded photo is not available")
    return send_file(io.BytesIO(data), mimetype=mimetype, max_age=max_age)


# ---------------------------------------------------------------------- plan view model
def _coats_text(plan: Plan, paint_id: str) -> str | None:
    """"2–3 coats on 12 strokes" for a paint some of whose strokes take more than one coat, else None."""
    coats = [s.coats for layer in plan.layers for s in layer.strokes if s.paint == paint_id and s.coats > 1]
    if not coats:
        return None
    lo, hi = min(coats), max(coats)
    return f"{lo}{'' if lo == hi else f'–{hi}'} coats on {wording.count(len(coats), 'stroke')}"


def _plan_view(plan: Plan, files: dict[str, str]) -> dict[str, Any]:
    """What the plan page shows of a finished plan; ``files`` maps its file names to URLs."""
    use = plan.extra.get("paint_use")  # the quantities its export wrote into plan.json
    use = use if isinstance(use, dict) else {}
    litres = {p.get("paint"): p for p in use.get("paints", []) if isinstance(p, dict)}
    paints = [{"id": p.id, "srgb": p.srgb, "lab": p.lab, "name": p.extra.get("name"), "recipe": p.recipe,
               "use": litres.get(p.id), "ground": p.id == plan.ground, "coats": _coats_text(plan, p.id),
               "batch": _batch_text(plan, p, use)}
              for p in plan.palette]
    steps = []
    pictures = EXPORTS["step-pictures"]
    step_names = sorted(n for n in files if pictures.matches(n))
    for n, name in enumerate(step_names):
        if n == 0:
            label, detail = "Ground", _ground_text(plan.ground, use.get("ground_coats"))
        elif n <= len(plan.layers):
            layer = plan.layers[n - 1]
            used = sorted({s.paint for s in layer.strokes}, key=_paint_key)
            label = f"Layer {n} of {len(plan.layers)}"
            detail = (f"{layer.brush_width_mm:g} mm brush, {len(layer.strokes)} strokes"
                      + (f" in {', '.join(used)}" if used else ""))
        else:
            label, detail = f"Step {n}", ""
        svg = name[:-4] + ".svg"
        steps.append({"url": files[name], "label": label, "detail": detail,
                      "svg": files.get(svg)})
    downloads, step_files = _downloads(files)
    stock_colours = {i.get("name"): i.get("srgb") for i in plan.inventory}
    return {
        "plan": plan, "paints": paints, "stock_colours": stock_colours,
        "batches": {p["id"]: p["batch"] for p in paints if p["batch"]}, "steps": steps, "downloads": downloads,
        "step_files": step_files,
        "paint_use": use if use.get("paints") else None,
        "stock": _stock_list(use),
        "wall_text": _size_text(plan.wall_width_mm, plan.wall_height_mm, plan.wall_unit),
        "strokes": plan.stroke_count(),
        "final_url": files.get("final.png"), "print_url": files.get("plan.html"),
        "svg_url": files.get("overlay.svg"),
        "warnings": caveats.plan_warnings(plan),  # e.g. a brush finer than the working raster, with the fix
    }


def _batch_text(plan: Plan, paint, use: dict[str, Any]) -> str:
    """The paint's whole batch in words (plan.json ``recipe.batch``; worked out from ``paint_use`` for plans
    written before that field); "" without a recipe or an amount."""
    from layerplan.batches import mix_batches

    recipe = paint.recipe
    entry = next((e for e in use.get("paints", []) if isinstance(e, dict) and e.get("paint") == paint.id), None)
    if not recipe or not entry or not isinstance(entry.get("litres"), (int, float)) or entry["litres"] <= 0:
        return ""
    batch = recipe.get("batch")
    if not isinstance(batch, list) or not all(isinstance(b, dict) and isinstance(b.get("litres"), (int, float))
                                              for b in batch):
        try:
            batch = mix_batches(dataclasses.replace(plan, palette=[paint]), {"paints": [entry]}).get(paint.id, [])
        except ValueError:
            return ""
    return wording.batch(batch, wording.is_us(plan.wall_unit))


def _downloads(files: dict[str, str]) -> tuple[list[dict[str, Any]], list[tuple[str, str]]]:
    """The download list, from the export registry (layerplan.export.EXPORTS), in its order.

    Returns the one-file exports the plan has (``{"name", "label", "url", "media_type",
    "opens"}``), then the per-step files as ``(name, url)`` sorted by name.
    """
    downloads = [{"name": e.files, "label": e.label, "url": files[e.files], "media_type": e.media_type,
                  "opens": e.opens}
                 for e in EXPORTS.values() if not e.per_step and e.files in files]
    step_files = [(name, files[name]) for name in sorted(files)
                  if any(e.per_step and e.matches(name) for e in EXPORTS.values())]
    return downloads, step_files


#: coats in words, as a person says them ("two flat coats")
_COUNT_WORDS = ("no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten")


def _ground_text(paint: str, coats) -> str:
    """What the ground step asks for, with the plan's own number of ground coats."""
    if not isinstance(coats, int) or isinstance(coats, bool) or coats < 0:
        return f"{paint} everywhere"
    if coats == 0:
        return f"{paint} everywhere: no coat planned (the surface is taken to be {paint} already)"
    words = _COUNT_WORDS[coats] if coats < len(_COUNT_WORDS) else str(coats)
    return f"{words} flat coat{'s' if coats != 1 else ''} of {paint} everywhere"


def plan_summary(settings: dict[str, Any]) -> dict[str, Any]:
    """What a plan is being made with, for the plan list and the progress page.

    Returns ``{"surface": "3 × 1.5 m", "paints": "8", "brushes": "100 / 50 / 25 / 12 mm",
    "facts": [(label, text), ...]}``: the main settings first, then the options that differ
    from their defaults. Every value is text. A stored record holding values no form would
    give (a number too large to write, a list where a number belongs) still gets a summary:
    what can be said is said, and the page never fails over it.
    """
    try:
        summary = _summary(settings if isinstance(settings, dict) else {})
        summary["paints"] = _said(summary["paints"])
        summary["seed"] = _said(summary["seed"])
        summary["facts"] = [(label, _said(text)) for label, text in summary["facts"]]
        return summary
    except Exception as exc:  # noqa: BLE001 - a record the page cannot describe is shown without its facts
        log.warning("a plan's settings cannot be summarised: %s: %s", type(exc).__name__,
                    forms.clip(str(exc), total=200))
        return {"surface": "", "paints": "", "brushes": "", "brush_count": 0, "seed": "", "facts": []}


def _fmt(fmt: str, value, *, scale: float = 1) -> str:
    """``fmt`` with a stored number (scaled, to 6 decimals); a number too large to write says so."""
    try:
        return fmt.format(round(float(value) * scale, 6))
    except (OverflowError, ValueError):
        return "a very large number"


def _said(value) -> str:
    """A value as short text ("" for none); huge numbers and long texts cut short."""
    if value is None or value == "":
        return ""
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) >= 10 ** 12:
        return "a very large number"
    return forms.clip(str(value), total=120)


def _summary(settings: dict[str, Any]) -> dict[str, Any]:
    web = settings.get(WEB_KEY) or {}
    unit = settings.get("wall_unit", "m")
    wall = web.get("wall_mm") or [settings.get("wall_width_mm"), settings.get("wall_height_mm")]
    surface = _size_text(*(list(wall) + [None, None])[:2], unit) or _width_text(settings.get("wall_width_mm"), unit)
    brushes = settings.get("brushes_mm") or []
    brushes_text = " / ".join(f"{b:g}" for b in brushes) + " mm" if brushes else ""
    facts = [("Surface", surface), ("Paints", str(settings.get("paints", ""))), ("Brushes", brushes_text)]
    pixel = settings.get("mm_per_px") or web.get("mm_per_px")
    if isinstance(pixel, (int, float)):
        facts.append(("Pixel size", f"{pixel:g} mm" + ("" if settings.get("mm_per_px") else " (automatic)")))
    if settings.get("fit") == "contain":
        facts.append(("Fit", "whole photo"))
    if settings.get("seed"):
        facts.append(("Seed", str(settings["seed"])))
    if settings.get("free_palette"):
        facts.append(("Colours", "the photo's own"))
    for key, label, fmt in (("mix_paints", "Most paints per mix", "{:g}"), ("max_parts", "Max parts per mix", "{:g}"),
                            ("tolerance_de", "Tolerance ΔE00", "{:g}"), ("stroke_cost", "Stroke cost", "{:g}")):
        value, default = settings.get(key), getattr(_S, key)
        if isinstance(value, (int, float)) and value != default:
            facts.append((label, _fmt(fmt, value)))
    facts += _classroom_facts(settings)
    output = web.get("output") or {}
    shown = {"coverage_m2_per_litre": ("Coverage", "{:g} m²/L", quantities.COVERAGE_M2_PER_L),
             "ground_coats": ("Ground coats", "{:g}", quantities.GROUND_COATS),
             "stroke_coats": ("Stroke coats", "{:g}", quantities.STROKE_COATS),
             "waste": ("Waste", "{:g} %", quantities.WASTE), "grid_mm": ("Grid", "{:g} cm", 500.0)}
    for key, (label, fmt, default) in shown.items():
        value = output.get(key)
        if isinstance(value, (int, float)) and value != default:
            facts.append((label, _fmt(fmt, value, scale=100 if key == "waste" else 0.1 if key == "grid_mm" else 1)))
    return {"surface": surface, "paints": settings.get("paints"), "brushes": brushes_text,
            "brush_count": len(brushes), "seed": settings.get("seed", 0), "facts": facts}


def _classroom_facts(settings: dict[str, Any]) -> list[tuple[str, str]]:
    """A classroom plan's sheet or board, class, value study and simple mixes, labelled as the start page labels them."""
    facts = []
    key = settings.get("surface")
    if isinstance(key, str) and key in forms.CHOICE_LABELS:
        facts.append((forms.LABELS["surface"], forms.CHOICE_LABELS[key]))
    # a stored record may hold anything: _said cuts huge numbers and long texts, as elsewhere on the page
    if settings.get("students"):
        facts.append((forms.LABELS["students"], _said(settings["students"])))
    if settings.get("value_study"):
        facts.append((forms.LABELS["value_study"], _said(settings["value_study"])))
    if settings.get("simple_mixes"):
        facts.append((forms.LABELS["simple_mixes"], "yes"))
    return facts


def _width_text(width_mm, unit: str) -> str:
    if not isinstance(width_mm, (int, float)):
        return ""
    return f"{wording.length(width_mm, unit)} wide"


def _paint_key(paint_id: str):
    digits = "".join(c for c in paint_id if c.isdigit())
    return (int(digits) if digits else math.inf, paint_id)


def _stock_list(use: dict[str, Any]) -> list[dict[str, Any]]:
    """Stock paints to buy (quantities stage, when the paints have recipes)."""
    rows = use.get("stock")
    return rows if isinstance(rows, list) and all(isinstance(r, dict) for r in rows) else []


@bp.app_template_filter("datetime")
def datetime_text(timestamp) -> str:
    """A Unix time as UTC text (the page's script shows it in the reader's own time zone)."""
    if not isinstance(timestamp, (int, float)):
        return ""
    return time.strftime("%d %b %Y, %H:%M UTC", time.gmtime(timestamp))


def _size_text(width_mm, height_mm, unit: str) -> str:
    """A surface's size as the printed plan says it (layerplan.wording.wall_size); "" when not known."""
    if not isinstance(width_mm, (int, float)) or not isinstance(height_mm, (int, float)):
        return ""
    return wording.wall_size(width_mm, height_mm, unit)


# ---------------------------------------------------------------------- machine programs
@bp.context_processor
def _machine_choices() -> dict[str, Any]:
    """The machine program formats and shipped profiles the plan page offers (layerplan.machine), and money."""
    from layerplan import machine

    return {"money": wording.money,  # the shopping list's prices, as the printed plan says them
            "machine_formats": [(f.key, f.label) for f in machine.FORMATS.values()],
            "machine_profiles": [(key, machine.shipped_profile(key).name) for key in machine.PROFILES]}


@bp.get("/plans/<plan_id>/machine")
def machine_program(plan_id: str):
    """A finished plan as a machine program: ``?format=gcode|hpgl|svg&profile=<shipped profile>``.

    Bad choices and plans that do not fit the machine answer 4xx with ``{"error": ...}``.
    """
    from flask import jsonify

    from layerplan import machine

    def refuse(message: str, status: int):
        response = jsonify(error=message)
        response.status_code = status
        return response

    # a private plan is not there for anyone but its owner, as on its page
    record = service.visible(plan_id)
    if record is None:
        return refuse(f"there is no plan {forms.clip(repr(plan_id))} (it may have been deleted)", 404)
    fmt = request.args.get("format", "gcode")
    name = request.args.get("profile", machine.DEFAULT_PROFILE)
    if fmt not in machine.FORMATS:
        return refuse(f"format must be one of {', '.join(machine.FORMATS)}, got {forms.clip(repr(fmt))}", 400)
    if name not in machine.PROFILES:
        return refuse(f"profile must be one of {', '.join(machine.PROFILES)}, got {forms.clip(repr(name))}", 400)
    try:
        plan = service.stored_plan(plan_id)
    except ValueError as exc:
        return refuse(f"the stored plan cannot be read: {exc}", 500)
    if plan is None:
        return refuse("the plan is not finished yet", 409)
    try:
        data = machine.machine_program(plan, machine.shipped_profile(name), fmt)
    except machine.MachineError as exc:
        return refuse(str(exc), 422)
    kind = machine.FORMATS[fmt]
    return send_file(io.BytesIO(data), mimetype=kind.media_type, as_attachment=True,
                     download_name=f"layerplan-{plan_id}-{name}{kind.suffix}")
