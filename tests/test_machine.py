"""Machine programs (layerplan/machine.py, layerplan/cli_machine.py).

Each program is read back by a small parser written here from the format's own reference, not from
layerplan's writer: RS274NGC (NIST RS274NGC Interpreter, Version 3, NISTIR 6556: G0 rapid, G1 feed,
Z, T n M6, comments in parentheses) and HP-GL/2 (HP-GL/2 and HP RTL Reference Guide: SP, PW, PU,
PD, one plotter unit = 0.025 mm). The strokes read back are re-rendered by the plan's own rendering
rule (layerplan.raster) and compared with the plan's picture, final.png's pixels.
"""

from __future__ import annotations

import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from layerplan import cli_machine, machine
from layerplan.machine import MachineError, profile_from_toml
from layerplan.plan import Layer, Plan, Stroke
from layerplan.raster import render_indices

REPO = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def plan():
    """A small real plan (chelsea, scikit-image's test photo), read back from its plan.json (0.01 mm)."""
    from skimage import data, transform

    from layerplan.pipeline import make_plan
    from layerplan.settings import Settings

    img = (transform.resize(data.chelsea(), (60, 80), anti_aliasing=True) * 255).astype(np.uint8)
    made = make_plan(img, Settings(wall_width_mm=800, wall_height_mm=600, paints=4, brushes_mm=(40, 20),
                                   mm_per_px=10, seed=1))
    return Plan.from_json(made.to_json())


def _profile(**over) -> str:
    """A profile's TOML text: a 1 × 0.8 m bed, wall at (50, 50), stations in a row under the wall.

    Stations are given in machine X, Y from the origin corner, so the row under the wall (bed-front
    (60, 760), then every 40 mm to the right) is written as the origin sees it.
    """
    origin = over.get("origin", "top-left")
    fx, sx = (1000 - 60.0, -40.0) if "right" in origin else (60.0, 40.0)
    fy = 800 - 760.0 if "bottom" in origin else 760.0
    v = {"width": 1000, "height": 800, "scale": "1.0", "at": "[50.0, 50.0]", "origin": origin,
         "load": 5000, "first": f"[{fx}, {fy}]", "step": f"[{sx}, 0.0]"}
    v.update(over)
    return f"""format = "layerplan.machine"
version = 1
name = "test bed"
[bed]
width_mm = {v['width']}
height_mm = {v['height']}
scale = {v['scale']}
wall_at_mm = {v['at']}
[axes]
origin = "{v['origin']}"
[z]
paint_mm = -0.5
lift_mm = 8.0
[reload]
load_mm = {v['load']}
first_mm = {v['first']}
step_mm = {v['step']}
dip_mm = -10.0
"""


# ------------------------------------------------------------------ independent readers
def parse_gcode(text: str):
    """RS274NGC read back: (strokes, tool changes, every XY position, lifted XY moves' Z).

    A stroke is the brush's XY path while Z <= 0 (a dab is one point), with the tool it was made with.
    """
    x = y = None
    z = 1.0
    mode = None
    tool = None
    selected = None
    strokes, tools, positions, travel_z = [], [], [], []
    current = None
    for raw in text.splitlines():
        line = re.sub(r"\([^)]*\)", "", raw).strip()
        if not line or line == "%":
            continue
        words = dict()
        for letter, number in re.findall(r"([A-Z])\s*([-+]?\d*\.?\d+)", line.upper()):
            words.setdefault(letter, []).append(float(number))
        for g in words.get("G", []):
            if g in (0, 1):
                mode = int(g)
        if "T" in words:
            selected = int(words["T"][0])
        if 6 in words.get("M", []):
            tool = selected
            tools.append(tool)
        nx = words["X"][0] if "X" in words else x
        ny = words["Y"][0] if "Y" in words else y
        nz = words["Z"][0] if "Z" in words else z
        moved_xy = (nx, ny) != (x, y)
        if moved_xy and nx is not None:
            positions.append((nx, ny))
            if mode == 0:
                travel_z.append(nz)
        if z > 0 >= nz:
            current = {"tool": tool, "points": [(nx, ny)]}
        elif nz <= 0 and moved_xy and current is not None:
            current["points"].append((nx, ny))
        elif z <= 0 < nz and current is not None:
            strokes.append(current)
            current = None
        x, y, z = nx, ny, nz
    return strokes, tools, positions, travel_z


def parse_hpgl(text: str):
    """HP-GL/2 read back: strokes (pen, width mm, points in mm) and the pens selected, in order."""
    pen, widths, pens = 0, {}, []
    pos = None
    down = False
    strokes = []
    current = None
    for cmd in (c.strip() for c in text.split(";")):
        if not cmd:
            continue
        op, args = cmd[:2].upper(), cmd[2:]
        nums = [float(v) for v in args.split(",")] if args.strip() else []
        if op == "SP":
            pen = int(nums[0])
            pens.append(pen)
        elif op == "PW":
            widths[int(nums[1]) if len(nums) > 1 else pen] = nums[0]
        elif op in ("PU", "PD"):
            if op == "PU":
                if current is not None:
                    strokes.append(current)
                    current = None
                down = False
            elif not down:
                down = True
                current = {"pen": pen, "width": widths[pen], "points": [pos]}
            for k in range(0, len(nums), 2):
                pos = (nums[k] / 40.0, nums[k + 1] / 40.0)  # 0.025 mm plotter units
                if down:
                    current["points"].append(pos)
    return strokes, pens


# ------------------------------------------------------------------ helpers
def _rerender(plan: Plan, strokes) -> np.ndarray:
    """The strokes (paint, width, wall-mm points) painted by the plan's rendering rule over its ground."""
    layer = Layer(brush_width_mm=1.0, strokes=[Stroke(paint=p, width_mm=w, path_mm=np.asarray(pts, float))
                                               for p, w, pts in strokes])
    return render_indices(Plan(plan.wall_width_mm, plan.wall_height_mm, plan.width_px, plan.height_px,
                               plan.mm_per_px, plan.palette, plan.ground, [layer]))


def _runs(plan: Plan):
    """The plan's paint runs from plan.json's own ``runs`` lists: (layer, paint) in painting order."""
    return [(n, r["paint"]) for n, layer in enumerate(plan.layers, start=1) for r in layer.extra["runs"]]


def _to_wall(xy, *, at=(50.0, 50.0), scale=1.0, bed=(1000.0, 800.0), origin="top-left"):
    """Machine X, Y back to wall mm, worked out here from the profile's meaning."""
    x, y = xy
    if "right" in origin:
        x = bed[0] - x
    if "bottom" in origin:
        y = bed[1] - y
    return ((x - at[0]) / scale, (y - at[1]) / scale)


def _wall_strokes(plan, parsed, **frame):
    """Parsed G-code strokes on the wall, as (paint, width, points); the dips off the wall apart."""
    on, dips = [], []
    for s in parsed:
        pts = [_to_wall(p, **frame) for p in s["points"]]
        layer, paint = divmod(s["tool"], 100)
        inside = all(-1e-6 <= x <= plan.wall_width_mm + 1e-6 and -1e-6 <= y <= plan.wall_height_mm + 1e-6
                     for x, y in pts)
        if inside:
            on.append((plan.palette[paint - 1].id, plan.layers[layer - 1].brush_width_mm * 1.0, pts))
        else:
            dips.append((s["tool"], s["points"]))
    return on, dips


def _length(pts) -> float:
    p = np.asarray(pts, float)
    return float(np.sum(np.hypot(*np.diff(p, axis=0).T))) if len(p) > 1 else 0.0


# ------------------------------------------------------------------ G-code
@pytest.mark.parametrize("origin,scale", [("top-left", 1.0), ("bottom-right", 1.0), ("bottom-left", 0.5)])
def test_gcode_read_back_paints_the_plans_picture(plan, origin, scale):
    profile = profile_from_toml(_profile(origin=origin, scale=scale, load=100000))
    text = machine.gcode(plan, profile)
    parsed, tools, positions, travel_z = parse_gcode(text)
    strokes, dips = _wall_strokes(plan, parsed, scale=scale, origin=origin)
    # the brush width at scale: scale the parsed points back, widths stay the plan's brush
    assert np.array_equal(_rerender(plan, strokes), render_indices(plan))
    # RS274NGC header: millimetres and absolute coordinates before any move
    head = re.sub(r"\([^)]*\)", "", text).split("M6", 1)[0]
    assert "G21" in head and "G90" in head
    # one tool change per paint run, in the runs' order, and each run's strokes made with its tool
    assert [(t // 100, plan.palette[t % 100 - 1].id) for t in tools] == _runs(plan)
    # lifted travel only: every rapid XY move happens with the brush above the wall (Z > 0)
    assert travel_z and min(travel_z) > 0
    # nothing outside the bed (1000 × 800 mm)
    xy = np.array(positions)
    assert xy.min() >= 0 and xy[:, 0].max() <= 1000 and xy[:, 1].max() <= 800
    # one load per run here (the load is longer than any run): one dip per tool change
    assert len(dips) == len(tools)


def _with_extra_coats(plan: Plan) -> Plan:
    """The plan with its first stroke given a second coat, unless some stroke already takes more than one."""
    import dataclasses

    if any(s.coats > 1 for layer in plan.layers for s in layer.strokes):
        return plan
    n = next(i for i, layer in enumerate(plan.layers) if layer.strokes)
    layer = plan.layers[n]
    strokes = (dataclasses.replace(layer.strokes[0], coats=2),) + tuple(layer.strokes[1:])
    layers = plan.layers[:n] + (dataclasses.replace(layer, strokes=strokes),) + plan.layers[n + 1:]
    return dataclasses.replace(plan, layers=layers)


def test_gcode_brush_down_length_is_the_strokes_length(plan):
    plan = _with_extra_coats(plan)
    profile = profile_from_toml(_profile(scale=0.5, origin="bottom-left"))
    parsed, *_ = parse_gcode(machine.gcode(plan, profile))
    painted = sum(_length(s["points"]) for s in parsed) / 0.5  # machine mm back to wall mm
    # each coat is painted again, as the printed plan's time rule counts it
    expected = sum(s.length_mm() * s.coats for layer in plan.layers for s in layer.strokes)
    assert any(s.coats > 1 for layer in plan.layers for s in layer.strokes)  # the check covers extra coats
    assert painted == pytest.approx(expected, rel=1e-6, abs=0.01)


def test_gcode_reloads_before_the_brush_runs_dry(plan):
    load = 250.0  # shorter than many strokes: they are cut and taken up again
    profile = profile_from_toml(_profile(load=load))
    parsed, tools, *_ = parse_gcode(machine.gcode(plan, profile))
    strokes, dips = _wall_strokes(plan, parsed)
    assert np.array_equal(_rerender(plan, strokes), render_indices(plan))
    since = 0.0
    longest = 0.0
    for s in parsed:
        pts = [_to_wall(p) for p in s["points"]]
        if not all(-1e-6 <= x <= plan.wall_width_mm + 1e-6 and -1e-6 <= y <= plan.wall_height_mm + 1e-6
                   for x, y in pts):
            # a dip: at the station of its run's paint, which the profile puts at first + (n - 1) × step
            n = s["tool"] % 100
            assert s["points"] == [(60.0 + (n - 1) * 40.0, 760.0)]
            since = 0.0
            continue
        since += _length(s["points"])
        longest = max(longest, since)
    assert longest <= load + 0.01
    assert len(dips) > len(tools)  # reloads inside runs, not only at tool changes


def test_plan_that_does_not_fit_the_bed_is_refused(plan):
    with pytest.raises(MachineError, match=r"does not fit the machine.*600 × 500 mm bed"):
        machine.gcode(plan, profile_from_toml(_profile(width=600, height=500)))


def test_station_on_the_wall_is_refused(plan):
    with pytest.raises(MachineError, match="on the wall"):
        machine.gcode(plan, profile_from_toml(_profile(first="[300.0, 300.0]")))


@pytest.mark.parametrize("text,match", [
    (_profile(origin="middle"), "axes.origin must be one of"),
    (_profile().replace("[z]", "[z]\nspeed = 3"), "unknown key.*speed"),
    (_profile().replace("paint_mm = -0.5", "paint_mm = 2"), "z.paint_mm must be <= 0"),
    (_profile().replace("version = 1", "version = 7"), "version must be 1"),
    (_profile(scale='"big"'), "bed.scale"),
    ("not = [toml", "not valid TOML"),
])
def test_bad_profiles_are_named(text, match):
    with pytest.raises(MachineError, match=match):
        profile_from_toml(text)


def test_shipped_profiles_read_and_names_agree():
    assert tuple(machine.FORMATS) == cli_machine.FORMAT_NAMES
    assert tuple(machine.PROFILES) == cli_machine.PROFILE_NAMES
    for name in machine.PROFILES:
        p = machine.shipped_profile(name)
        assert p.bed_width_mm > 0 and p.lift_z_mm > 0 and p.paint_z_mm <= 0


# ------------------------------------------------------------------ HPGL
def test_hpgl_read_back_paints_the_plans_picture(plan):
    profile = profile_from_toml(_profile(origin="bottom-left"))
    strokes, pens = parse_hpgl(machine.hpgl(plan, profile))
    wall = [(plan.palette[s["pen"] - 1].id, s["width"], [_to_wall(p, origin="bottom-left") for p in s["points"]])
            for s in strokes]
    # one pen per paint: each run selects the pen numbered as its paint
    assert [plan.palette[p - 1].id for p in pens if p] == [paint for _, paint in _runs(plan)]
    got, want = _rerender(plan, wall), render_indices(plan)
    # plotter units are 0.025 mm, the plan keeps 0.01 mm: a point moves by up to 0.0125 mm, which can only
    # change a pixel whose centre lies that close to a stroke's edge, i.e. on a boundary between paints
    edge = np.zeros_like(want, dtype=bool)
    edge[:, 1:] |= want[:, 1:] != want[:, :-1]
    edge[:, :-1] |= want[:, 1:] != want[:, :-1]
    edge[1:] |= want[1:] != want[:-1]
    edge[:-1] |= want[1:] != want[:-1]
    assert np.all(edge[got != want])
    assert np.mean(got != want) < 0.005
    pts = np.concatenate([np.asarray(s["points"]) for s in strokes])
    assert pts.min() >= 0 and pts[:, 0].max() <= 1000 and pts[:, 1].max() <= 800


# ------------------------------------------------------------------ SVG
def test_plotter_svg_has_a_group_per_run_and_paints_the_picture(plan):
    profile = profile_from_toml(_profile(scale=0.5))
    root = ET.fromstring(machine.plotter_svg(plan, profile))
    ns = {"s": "http://www.w3.org/2000/svg"}
    groups = root.findall("s:g", ns)
    colours = {p.srgb: p.id for p in plan.palette}
    assert [colours[g.get("stroke")] for g in groups] == [paint for _, paint in _runs(plan)]
    strokes = []
    for g in groups:
        width = float(g.get("stroke-width")) / 0.5
        for path in g.findall("s:path", ns):
            pts = [tuple(float(v) for v in pair.split(",")) for pair in re.findall(r"[-\d.]+,[-\d.]+", path.get("d"))]
            strokes.append((colours[g.get("stroke")], width, [_to_wall(p, scale=0.5) for p in pts]))
    assert np.array_equal(_rerender(plan, strokes), render_indices(plan))


# ------------------------------------------------------------------ command line
def test_cli_writes_a_program_and_never_replaces_a_file(plan, tmp_path):
    src = tmp_path / "plan.json"
    src.write_text(plan.to_json(), encoding="utf-8")
    prof = tmp_path / "bed.toml"
    prof.write_text(_profile(), encoding="utf-8")
    out = tmp_path / "wall.nc"
    run = [sys.executable, "-m", "layerplan", "machine", str(src), "--format", "gcode", "--profile", str(prof),
           "--out", str(out)]
    done = subprocess.run(run, cwd=REPO, capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert parse_gcode(out.read_text())[1]  # tool changes were written
    before = out.read_bytes()
    again = subprocess.run(run, cwd=REPO, capture_output=True, text=True)
    assert again.returncode == 2 and "exists" in again.stderr
    assert out.read_bytes() == before
    small = tmp_path / "small.toml"
    small.write_text(_profile(width=300, height=300), encoding="utf-8")
    refused = subprocess.run(run[:-4] + ["--profile", str(small), "--out", str(tmp_path / "x.nc")], cwd=REPO,
                             capture_output=True, text=True)
    assert refused.returncode == 2 and "does not fit" in refused.stderr
    assert not (tmp_path / "x.nc").exists()


# ------------------------------------------------------------------ web page
def test_plan_page_offers_machine_programs_and_serves_them(client):
    from conftest import plan_form, wait_for_plan

    r = client.post("/api/plans", data=plan_form(), content_type="multipart/form-data")
    assert r.status_code in (201, 202), r.get_data(as_text=True)
    plan_id = r.get_json()["id"]
    assert wait_for_plan(client, plan_id)[-1]["state"] == "done"
    page = client.get(f"/plans/{plan_id}").get_data(as_text=True)
    assert f"/plans/{plan_id}/machine" in page
    for key in machine.FORMATS:
        assert f'value="{key}"' in page
    for key in machine.PROFILES:
        assert f'value="{key}"' in page
    got = client.get(f"/plans/{plan_id}/machine?format=hpgl&profile=pen-plotter-a3")
    assert got.status_code == 200 and got.mimetype == "application/vnd.hp-hpgl"
    assert "attachment" in got.headers["Content-Disposition"]
    strokes, pens = parse_hpgl(got.get_data(as_text=True))
    pts = np.concatenate([np.asarray(s["points"]) for s in strokes])
    assert pts.min() >= 0 and pts[:, 0].max() <= 420 and pts[:, 1].max() <= 297  # the A3 sheet (ISO 216)
    gcode = client.get(f"/plans/{plan_id}/machine?format=gcode&profile=wall-robot")
    assert gcode.status_code == 200 and parse_gcode(gcode.get_data(as_text=True))[1]
    bad = client.get(f"/plans/{plan_id}/machine?format=dxf")
    assert bad.status_code == 400 and "format must be one of" in bad.get_json()["error"]
    bad = client.get(f"/plans/{plan_id}/machine?profile=moon-rover")
    assert bad.status_code == 400 and "profile must be one of" in bad.get_json()["error"]
    assert client.get("/plans/nosuchplan/machine").status_code == 404
