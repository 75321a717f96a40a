"""Exports (layerplan/export.py): the registry names every file the export writes, each file
is what its media type says (read back with Python's own json, xml.etree and html.parser,
Pillow, pypdf, and the PNG signature of ISO/IEC 15948 §5.2), the plan handed in is never changed,
and the web page's download list is the registry's."""

from __future__ import annotations

import copy
import dataclasses
import io
import json
import mimetypes
import xml.etree.ElementTree as ET
from html import unescape
from html.parser import HTMLParser

import numpy as np
import pytest
from PIL import Image

import layerplan.export as export
import layerplan.quantities as quantities
from layerplan.export import EXPORTS, Export, build_files, export_for, write_outputs
from layerplan.plan import Layer, Paint, Plan, Stroke

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # ISO/IEC 15948 (PNG) §5.2
SVG_ROOT = "{http://www.w3.org/2000/svg}svg"


def _board() -> Plan:
    """A 60 × 40 cm board at 5 mm a pixel: ground P1, a layer of 40 mm strokes, a layer of 20 mm ones."""
    palette = [Paint("P1", "#f0e8d8", (92.6, 1.5, 7.5)), Paint("P2", "#c03020", (44.0, 56.0, 46.0)),
               Paint("P3", "#2050a0", (36.0, 12.0, -50.0),
                     extra={"recipe": {"parts": [{"paint": "Blue", "parts": 2}, {"paint": "White", "parts": 1}]}})]
    rng = np.random.default_rng(3)
    layers = []
    for width, count in ((40.0, 5), (20.0, 7)):
        strokes = [Stroke(f"P{rng.integers(2, 4)}", width,
                          np.round(rng.uniform([30, 30], [570, 370], (int(rng.integers(1, 4)), 2)), 1))
                   for _ in range(count)]
        layers.append(Layer(width, strokes))
    extra = {"generator": "test", "settings": {"wall_width_mm": 600.0, "wall_unit": "cm", "paints": 3},
             "inventory": [{"name": "Blue", "srgb": "#1030a0", "containers_l": [0.5]},
                           {"name": "White", "srgb": "#ffffff", "containers_l": [1.0]}]}
    return Plan(600.0, 400.0, 120, 80, 5.0, palette, "P1", layers, extra)


#: the exports written only when asked: a site photo and its corners (mock-ups), a panel size (panels.html)
_ASKED = {"site_photo": np.full((90, 140, 3), 128, np.uint8), "site_corners": (10, 10, 130, 15, 125, 80, 15, 85),
          "panels_mm": (300.0, 300.0), "panel_overlap_mm": 20.0}
#: the exports whose pictures are not at raster size: the mock-ups are the site photo's size
_PHOTO_SIZED = ("mockup.png", "step-mockups")


@pytest.fixture(scope="module")
def files():
    return build_files(_board(), **_ASKED)


def _read(media_type: str, data: bytes):
    """Read ``data`` as ``media_type`` with a general-purpose reader; raise if it is not one."""
    if media_type == "image/png":
        assert data.startswith(PNG_SIGNATURE)
        with Image.open(io.BytesIO(data)) as img:
            img.load()
            return img.size
    if media_type == "image/svg+xml":
        root = ET.fromstring(data)
        assert root.tag == SVG_ROOT
        return root
    if media_type == "application/json":
        return json.loads(data)
    if media_type == "text/html":
        text = data.decode("utf-8")
        assert text.lstrip().lower().startswith("<!doctype html>")  # HTML Living Standard §13.1.1
        HTMLParser().feed(text)
        return text
    if media_type == "application/pdf":
        from pypdf import PdfReader  # a general-purpose PDF reader (tests/test_pdf.py checks the pages)

        assert data.startswith(b"%PDF-")  # ISO 32000-1 §7.5.2, the file header
        return len(PdfReader(io.BytesIO(data)).pages)
    raise AssertionError(f"no reader for {media_type}")


def test_the_registry_covers_every_file_build_files_writes(files):
    owners = {name: [e.name for e in EXPORTS.values() if e.matches(name)] for name in files}
    assert all(len(o) == 1 for o in owners.values()), owners  # each file belongs to exactly one export
    assert {o[0] for o in owners.values()} == set(EXPORTS)  # and every export writes something
    for name, data in files.items():
        entry = export_for(name)
        # the registry's media type is the one Python's own table gives the file name (IANA types)
        assert entry.media_type == mimetypes.guess_type(name)[0], name
        _read(entry.media_type, data)
    # one picture for the ground and one per layer; one SVG per layer
    assert sum(EXPORTS["step-pictures"].matches(n) for n in files) == len(_board().layers) + 1
    assert sum(EXPORTS["layer-overlays"].matches(n) for n in files) == len(_board().layers)
    assert export_for("steps/1.png") is None and export_for("notes.txt") is None


def test_the_pictures_are_the_plan_at_raster_size(files):
    plan = _board()
    for name, data in files.items():
        if export_for(name).name in _PHOTO_SIZED:
            assert _read("image/png", data) == (140, 90)
        elif export_for(name).media_type == "image/png":
            assert _read("image/png", data) == (plan.width_px, plan.height_px)
    assert files["final.png"] == files[f"steps/{len(plan.layers):02d}.png"]
    ground = np.asarray(Image.open(io.BytesIO(files["steps/00.png"])).convert("RGB"))
    assert (ground == plan.paint(plan.ground).rgb).all()


def test_exporting_never_changes_the_plan():
    plan = _board()
    before_json, before_extra = plan.to_json(), copy.deepcopy(plan.extra)
    first = json.loads(build_files(plan, waste=0.3, ground_coats=3)["plan.json"])
    second = json.loads(build_files(plan)["plan.json"])
    assert plan.to_json() == before_json and plan.extra == before_extra and "paint_use" not in plan.extra
    # each file has the quantities of its own options, not the leftovers of the one before
    assert (first["paint_use"]["waste"], first["paint_use"]["ground_coats"]) == (0.3, 3)
    assert (second["paint_use"]["waste"], second["paint_use"]["ground_coats"]) == (
        quantities.WASTE, quantities.GROUND_COATS)
    with pytest.raises(dataclasses.FrozenInstanceError):
        plan.extra = {}


def test_paint_use_is_worked_out_once_and_shared(monkeypatch):
    calls = []
    real = quantities.paint_use

    def counted(plan, **options):
        calls.append(options)
        return real(plan, **options)

    monkeypatch.setattr(quantities, "paint_use", counted)
    out = build_files(_board(), coverage_m2_per_litre=8.0)
    assert calls == [{"coverage_m2_per_litre": 8.0}]
    doc = json.loads(out["plan.json"])
    assert doc["paint_use"] == real(_board(), coverage_m2_per_litre=8.0)
    assert "8 m² per litre" in out["plan.html"].decode()  # the printed plan got the same figures


def test_plan_json_keeps_the_contract_and_the_paint_use_section_goes_last(files):
    plan = _board()
    doc = json.loads(files["plan.json"])
    # the derived sections last: paint use, then the work schedule worked out from it
    assert list(doc) == [*plan.to_dict(), "paint_use", "schedule"]
    assert doc["settings"]["wall_unit"] == "cm" and doc["inventory"] == plan.extra["inventory"]
    # the recipe as given, plus its batch (the split of the paint's litres, layerplan.batches)
    assert {k: v for k, v in doc["palette"][2]["recipe"].items() if k != "batch"} == plan.palette[2].extra["recipe"]
    assert sum(b["litres"] for b in doc["palette"][2]["recipe"]["batch"]) == pytest.approx(
        doc["paint_use"]["paints"][2]["litres"], abs=1e-9)
    # a plan read back and exported again with the same options gives the same bytes (the
    # earlier paint_use section is replaced where it stands)
    again = build_files(Plan.from_json(files["plan.json"].decode()))
    assert again["plan.json"] == files["plan.json"]


def test_unknown_options_are_named():
    with pytest.raises(ValueError, match=r"unknown export option\(s\) colour; valid: grid_mm, coverage_m2_per_litre"):
        build_files(_board(), colour="red")


# ------------------------------------------------------------------ the web page's download list
class _Links(HTMLParser):
    """Every <a> with its attributes and text."""

    def __init__(self):
        super().__init__()
        self.links: list[dict] = []
        self._open = None

    def handle_starttag(self, tag, attrs):
        if tag == "a":
            self._open = dict(attrs, text="")
            self.links.append(self._open)

    def handle_data(self, data):
        if self._open is not None:
            self._open["text"] += data

    def handle_endtag(self, tag):
        if tag == "a":
            self._open = None


def _done_plan(app, plan: Plan) -> str:
    """A finished plan in the web app's store, its files written by the export."""
    store = app.extensions["layerplan"].store
    plan_id = store.create({"wall_width_mm": plan.wall_width_mm, "wall_unit": plan.wall_unit}, b"not used",
                           source_name="board.png")
    assert store.mark_running(plan_id)
    write_outputs(plan, store.out_dir(plan_id))
    assert store.mark_done(plan_id)
    return plan_id


def _page_links(client, plan_id):
    r = client.get(f"/plans/{plan_id}")
    assert r.status_code == 200
    parser = _Links()
    parser.feed(r.get_data(as_text=True))
    return parser.links


def test_the_plan_page_lists_the_registry_downloads(app, client):
    plan_id = _done_plan(app, _board())
    links = _page_links(client, plan_id)
    files = app.extensions["layerplan"].store.output_files(plan_id)
    url = f"/api/plans/{plan_id}/files/"
    listed = [a for a in links if a.get("id", "").startswith("dl-")]
    # every one the plan has (the mock-ups and panels.html are written only when asked for)
    singles = [e for e in EXPORTS.values() if not e.per_step and e.files in files]
    assert {"plan.html", "plan.json", "final.png", "overlay.svg"} <= {e.name for e in singles}
    assert [a["href"] for a in listed] == [url + e.files for e in singles]  # every one, in the registry's order
    for a, e in zip(listed, singles):
        assert a["text"].strip() == e.label and a["type"] == e.media_type
        assert ("download" in a) is not e.opens and (a.get("target") == "_blank") is e.opens
    # the per-step files, each of them, in the smaller list
    per_step = sorted(n for n in files if export_for(n).per_step)
    assert per_step and [a["href"] for a in links if a["href"].startswith(url + "steps/")] == [url + n for n in per_step]


def test_a_new_registry_entry_is_written_and_listed(app, client, monkeypatch):
    import layerplan.web.pages as pages

    def palette_text(inputs):
        return {"palette.txt": "".join(f"{p.id} {p.srgb}\n" for p in inputs.plan.palette).encode()}

    registry = {**EXPORTS, "palette": Export("palette", "palette.txt", "Palette (text)", "text/plain", palette_text)}
    monkeypatch.setattr(export, "EXPORTS", registry)
    monkeypatch.setattr(pages, "EXPORTS", registry)
    plan_id = _done_plan(app, _board())
    link = next(a for a in _page_links(client, plan_id) if a.get("id") == "dl-palette-txt")
    assert link["text"].strip() == "Palette (text)" and link["type"] == "text/plain"
    assert client.get(link["href"]).data == b"P1 #f0e8d8\nP2 #c03020\nP3 #2050a0\n"


@pytest.mark.parametrize("damage,words", [
    (lambda doc: doc.pop("layers"), "missing or has a malformed field: 'layers'"),
    (lambda doc: doc["settings"].update(wall_unit="furlong"), "settings.wall_unit must be one of"),
    (lambda doc: doc.update(format="something else"), "not a layerplan plan"),
])
def test_a_damaged_stored_plan_is_named_on_its_page(app, client, damage, words):
    plan_id = _done_plan(app, _board())
    path = app.extensions["layerplan"].store.out_dir(plan_id) / "plan.json"
    doc = json.loads(path.read_text())
    damage(doc)
    path.write_text(json.dumps(doc))
    r = client.get(f"/plans/{plan_id}")
    html = unescape(r.get_data(as_text=True))
    assert r.status_code == 500 and "The stored plan cannot be shown" in html and words in html
    assert 'id="delete"' in html  # it can still be deleted from its page
    path.unlink()
    r = client.get(f"/plans/{plan_id}")
    assert r.status_code == 500 and "plan.json is missing" in r.get_data(as_text=True)


# ------------------------------------------------------------------ where a plan may be written
def test_check_destination_names_what_is_wrong(tmp_path, monkeypatch):
    from layerplan.export import check_destination

    with pytest.raises(ValueError, match=r"^/ is the root folder; give a folder for the plan, e.g. /plan$"):
        check_destination("/")
    with pytest.raises(ValueError, match=r"^give the folder to write the plan into$"):
        check_destination("  ")
    (tmp_path / "gone").symlink_to(tmp_path / "nowhere")
    with pytest.raises(ValueError, match=r"is a link to nothing"):
        check_destination(tmp_path / "gone")
    # '.' and '..' name the folders they stand for (a plan folder needs a name for its partial folder)
    (tmp_path / "here").mkdir()
    monkeypatch.chdir(tmp_path / "here")
    assert check_destination(".") == tmp_path / "here" and check_destination("sub/..") == tmp_path / "here"
    busy = tmp_path / "busy"
    busy.mkdir()
    for name in ("a.txt", "b.txt", "c.txt", "d.txt", "e.txt"):
        (busy / name).write_text("x")
    with pytest.raises(ValueError, match=r"holds no plan \(a.txt, b.txt, c.txt and 2 more\)"):
        check_destination(busy)
    # the photo's own folder: only when it holds nothing else, and not under a name the plan writes
    (tmp_path / "solo").mkdir()
    (tmp_path / "solo" / "wall.jpg").write_bytes(b"jpeg")
    assert check_destination(tmp_path / "solo", photo=tmp_path / "solo" / "wall.jpg") == tmp_path / "solo"
    (tmp_path / "odd").mkdir()
    (tmp_path / "odd" / "final.png").write_bytes(b"png")
    with pytest.raises(ValueError, match=r"holds the photo final.png, a name the plan writes"):
        check_destination(tmp_path / "odd", photo=tmp_path / "odd" / "final.png")
    assert not [p for p in tmp_path.rglob(".layerplan-probe-*")]  # the writability probe leaves nothing


def test_clean_partials_removes_only_abandoned_folders_of_plan_files(tmp_path):
    import os
    import subprocess
    import sys

    from layerplan.export import clean_partials

    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True, check=True).stdout.strip()  # a process id that has just ended
    gone = tmp_path / f".mural.partial-{dead}-x1"
    (gone / "steps").mkdir(parents=True)
    (gone / "steps" / "01.svg").write_text("<svg/>")
    ours = tmp_path / f".mural.partial-{os.getpid()}-x2"  # this process is still writing it
    ours.mkdir()
    other_name = tmp_path / f".other.partial-{dead}-x3"
    other_name.mkdir()
    recent_legacy = tmp_path / ".mural.partial-abcd"  # no process id, made just now: may be live
    recent_legacy.mkdir()
    assert clean_partials(tmp_path, "mural") == [gone]
    assert ours.exists() and other_name.exists() and recent_legacy.exists() and not gone.exists()
