"""HTML pages: the start page (upload form and recent plans), a plan's progress and its result."""

from __future__ import annotations

import io
import math
from typing import Any

from flask import (Blueprint, abort, current_app, redirect, render_template, request, send_file,
                   url_for)
from PIL import Image
from werkzeug.exceptions import RequestEntityTooLarge

from layerplan.units import UNITS_MM

from . import forms, service

bp = Blueprint("pages", __name__)

#: what the start page's form holds before anyone types
FORM_DEFAULTS = {"wall_width": "3", "wall_height": "", "unit": "m", "paints": "8", "kit": forms.DEFAULT_KIT,
                 "brushes": "", "fit": "cover", "seed": "0", "pixel_mm": "", "inventory": "default",
                 "inventory_text": "", "free_palette": ""}
#: mimetypes of the photo formats we accept, by Pillow format id
_PHOTO_TYPES = {"JPEG": "image/jpeg", "MPO": "image/jpeg", "PNG": "image/png", "WEBP": "image/webp",
                "TIFF": "image/tiff"}


def _start_page(values: dict[str, str] | None = None, error: str | None = None, status: int = 200):
    merged = dict(FORM_DEFAULTS)
    if values:
        merged.update({k: v for k, v in values.items() if k in FORM_DEFAULTS})
    limit = int(current_app.config["RECENT_PLANS"])
    recent = service.store().recent(limit)
    limit = current_app.config.get("MAX_CONTENT_LENGTH")
    max_size = forms.size_text(limit) if limit else ""
    return render_template("start.html", values=merged, error=error, recent=recent, kits=forms.BRUSH_KITS,
                           units=forms.UNIT_CHOICES, max_size=max_size, inventory=_inventory_view()), status


def _inventory_view() -> dict[str, Any] | None:
    """The default inventory for the form, or None when this build has no mix recipes."""
    module = forms.inventory_module()
    if module is None:
        return None
    from importlib import resources

    text = resources.files("layerplan").joinpath("data", module.DEFAULT_INVENTORY_NAME).read_text("utf-8")
    return {"default": module.default_inventory().to_list(), "default_text": text}


@bp.get("/")
def start():
    return _start_page()


@bp.post("/plans")
def create():
    try:
        form, files = request.form, request.files
    except RequestEntityTooLarge:
        limit = forms.size_text(current_app.config["MAX_CONTENT_LENGTH"])
        return _start_page(None, f"the photo is too large: at most {limit}", 413)
    try:
        plan_id = service.submit(form, files)
    except forms.RequestError as exc:
        return _start_page(form.to_dict(), str(exc), exc.status)
    except service.Busy as exc:
        return _start_page(form.to_dict(), str(exc), 503)
    return redirect(url_for("pages.plan_page", plan_id=plan_id), code=303)


@bp.get("/plans/<plan_id>")
def plan_page(plan_id: str):
    record = service.store().get(plan_id)
    if record is None:
        abort(404, description=f"there is no plan {plan_id!r} (it may have been deleted)")
    view: dict[str, Any] = {"record": record, "status": service.status(record)}
    if record.state == "done":
        doc = service.plan_document(plan_id)
        if doc is None:
            abort(500)
        view.update(_plan_view(plan_id, doc, view["status"]["files"]))
    return render_template("plan.html", **view)


@bp.post("/plans/<plan_id>/delete")
def delete(plan_id: str):
    if not service.delete(plan_id):
        abort(404, description=f"there is no plan {plan_id!r} (it may have been deleted already)")
    return redirect(url_for("pages.start"), code=303)


@bp.get("/plans/<plan_id>/photo")
def photo(plan_id: str):
    if service.store().get(plan_id) is None:
        abort(404, description=f"there is no plan {plan_id!r}")
    path = service.store().upload_path(plan_id)
    try:
        data = path.read_bytes()
        with Image.open(io.BytesIO(data)) as img:
            mimetype = _PHOTO_TYPES.get(img.format, "application/octet-stream")
    except (OSError, ValueError):
        abort(404, description="the uploaded photo is not available")
    return send_file(io.BytesIO(data), mimetype=mimetype, max_age=3600)


# ---------------------------------------------------------------------- plan view model
def _plan_view(plan_id: str, doc: dict[str, Any], files: dict[str, str]) -> dict[str, Any]:
    palette = doc.get("palette", [])
    use = doc.get("paint_use") or {}
    litres = {p.get("paint"): p for p in use.get("paints", [])}
    paints = []
    for p in palette:
        recipe = p.get("recipe")
        paints.append({"id": p["id"], "srgb": p["srgb"], "lab": p.get("lab"), "name": p.get("name"),
                       "recipe": recipe if isinstance(recipe, dict) else None,
                       "use": litres.get(p["id"]), "ground": p["id"] == doc.get("ground", {}).get("paint")})
    steps = []
    step_names = sorted(n for n in files if n.startswith("steps/") and n.endswith(".png"))
    layers = doc.get("layers", [])
    for n, name in enumerate(step_names):
        if n == 0:
            label, detail = "Ground coat", f"one flat coat of {doc.get('ground', {}).get('paint', '')} everywhere"
        elif n <= len(layers):
            layer = layers[n - 1]
            used = sorted({s["paint"] for s in layer.get("strokes", [])}, key=_paint_key)
            label = f"Layer {n} of {len(layers)}"
            detail = (f"{layer['brush']['width_mm']:g} mm brush, {len(layer.get('strokes', []))} strokes"
                      + (f" in {', '.join(used)}" if used else ""))
        else:
            label, detail = f"Step {n}", ""
        svg = name[:-4] + ".svg"
        steps.append({"url": files[name], "label": label, "detail": detail,
                      "svg": files.get(svg)})
    wall = doc.get("wall", {})
    unit = (doc.get("settings") or {}).get("wall_unit", "m")
    downloads = []
    for name, label in (("plan.html", "Print plan (open and print)"), ("overlay.svg", "Wall-scale SVG overlay"),
                        ("plan.json", "Plan data (JSON)"), ("final.png", "Final picture (PNG)")):
        if name in files:
            downloads.append({"name": name, "label": label, "url": files[name]})
    step_files = [(n, files[n]) for n in sorted(files) if n.startswith("steps/")]
    stock_colours = {i.get("name"): i.get("srgb") for i in doc.get("inventory") or [] if isinstance(i, dict)}
    return {
        "doc": doc, "paints": paints, "stock_colours": stock_colours, "steps": steps, "downloads": downloads, "step_files": step_files,
        "paint_use": use if use.get("paints") else None,
        "stock": _stock_list(use),
        "wall_text": _size_text(wall.get("width_mm"), wall.get("height_mm"), unit),
        "strokes": sum(len(layer.get("strokes", [])) for layer in layers),
        "final_url": files.get("final.png"), "print_url": files.get("plan.html"),
        "svg_url": files.get("overlay.svg"),
    }


def _paint_key(paint_id: str):
    digits = "".join(c for c in paint_id if c.isdigit())
    return (int(digits) if digits else math.inf, paint_id)


def _stock_list(use: dict[str, Any]) -> list[dict[str, Any]]:
    """Stock paints to buy (quantities stage, when the paints have recipes)."""
    rows = use.get("stock")
    return rows if isinstance(rows, list) and all(isinstance(r, dict) for r in rows) else []


@bp.app_template_filter("litres")
def litres_text(value) -> str:
    """Litres to two decimals; a trace shows as "< 0.01" rather than a misleading 0.00."""
    if not isinstance(value, (int, float)):
        return ""
    return "< 0.01" if 0 < value < 0.005 else f"{value:.2f}"


@bp.app_template_global()
def containers_text(containers) -> str:
    """``[{"litres": 4, "count": 1}, {"litres": 1, "count": 2}]`` -> ``"1 × 4 L + 2 × 1 L"``."""
    if not isinstance(containers, list) or not containers:
        return ""
    return " + ".join(f"{c.get('count', 1)} × {c.get('litres', 0):g} L" for c in containers if isinstance(c, dict))


def _size_text(width_mm, height_mm, unit: str) -> str:
    if not isinstance(width_mm, (int, float)) or not isinstance(height_mm, (int, float)):
        return ""
    factor = UNITS_MM.get(unit, 1000.0)
    return f"{width_mm / factor:.3g} × {height_mm / factor:.3g} {unit}"
