"""Machine programs: a plan's strokes as G-code, HPGL or plotter SVG, in a machine's own frame.

A :class:`MachineProfile` (a TOML file of our own format, ``layerplan.machine`` version 1; the
example ``layerplan/data/machine_wall_robot.toml`` explains every key) says how big the machine's
bed is, where the wall sits on it and at what scale, which corner is the machine's origin, the
brush heights, the feed rates and where each paint's reload station is. :func:`machine_runs`
turns a plan into the moves every format shares, and one writer per format lays them out:

``gcode``
    RS274NGC: millimetres (``G21``), absolute (``G90``). X and Y are machine millimetres from
    the profile's origin corner (by default the wall's top-left, y down, as the plan). The brush is
    on the wall at Z <= 0 and lifted above 0; lifted travel is rapid (``G0``), painting is ``G1``
    at the painting feed. Each paint run (a layer's strokes of one paint, painted together, the
    same runs as the printed plan's time rule counts) starts with one tool change ``T<n> M6``,
    ``n`` = 100 × layer + paint number (T203: layer 2's brush with paint P3), then loads the brush
    at its paint's station. The brush goes back to the station whenever the next stroke would take
    it past the profile's ``load_mm`` of painting since it was loaded; a stroke longer than a whole
    load is cut there and taken up again where it stopped. Strokes go in the plan's order, which
    inside each run is its short-travel order (:func:`layerplan.order.short_travel`).
``hpgl``
    HP-GL/2: ``IN``, absolute plotting (``PA``), one pen per paint (``SP n`` for paint Pn), its
    width set to the layer's brush at scale (``PW``, mm), pen up ``PU`` and down ``PD``, in plotter
    units of 0.025 mm from the profile's origin. A pen needs no reloading.
``svg``
    One group per paint run, in painting order (marked as drawing layers, which plotter software
    plots one after another), each stroke a path of the brush width at scale; the page is the bed
    as seen from the front (SVG's own frame: top-left, y down, whatever the profile's origin).

A stroke that takes more than one coat is painted that many times, one after another, as the
printed plan's time rule counts it.

References
----------
.. [1] T. R. Kramer, F. M. Proctor, E. Messina, "The NIST RS274NGC Interpreter - Version 3",
   NISTIR 6556, 2000 (G0, G1, G17, G21, G90, G94, T, M6, M2; comments in parentheses).
.. [2] Hewlett-Packard, "The HP-GL/2 and HP RTL Reference Guide", 3rd ed., 1997 (IN, PA, SP, PW,
   PU, PD; one plotter unit = 0.025 mm).
.. [3] W3C, Scalable Vector Graphics (SVG) 1.1 (Second Edition), 2011 (paths, stroke-linecap).
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from .plan import Plan

FORMAT = "layerplan.machine"
VERSION = 1
#: HP-GL/2 plotter units per millimetre (one unit is 0.025 mm; HP-GL/2 Reference Guide)
HPGL_UNITS_PER_MM = 40
#: decimals of a G-code coordinate (1 µm: finer than any brush machine moves; keeps the plan's 0.01 mm exact)
GCODE_DECIMALS = 3
#: the origins a profile may name: the bed corner that is X = 0, Y = 0, and whether X and Y run left and up
ORIGINS = {"top-left": (False, False), "bottom-left": (False, True), "top-right": (True, False),
           "bottom-right": (True, True)}
#: the profiles shipped with layerplan (package data), by the name the web page and ``--profile`` give them
PROFILES = {"wall-robot": "machine_wall_robot.toml", "pen-plotter-a3": "machine_pen_plotter_a3.toml"}
DEFAULT_PROFILE = "wall-robot"
#: slack when checking that a point is on the bed, machine mm (rounding of the plan's 0.01 mm)
_ON_BED_MM = 1e-6


class MachineError(ValueError):
    """A machine profile that cannot be read, or a plan the machine cannot paint (the message says why)."""


# ------------------------------------------------------------------------------ the profile
@dataclass(frozen=True)
class MachineProfile:
    """What a machine can do and where things are on it (see ``machine_wall_robot.toml``).

    Attributes
    ----------
    name : str
    bed_width_mm, bed_height_mm : float
        What the machine reaches, machine mm.
    scale : float or None
        Machine mm per wall mm; None fits the wall to the bed (inside the margin ``wall_at_mm`` leaves).
    wall_at_mm : (float, float)
        The wall's top-left corner from the bed's top-left corner, machine mm.
    origin : str
        A key of :data:`ORIGINS`.
    paint_z_mm, lift_z_mm, dip_z_mm : float
        Brush on the wall (<= 0), lifted (> 0), down in a station's pot (<= 0).
    paint_feed_mm_per_min, plunge_feed_mm_per_min : float
    load_mm : float
        Most painting per load, machine mm; 0 never reloads (a pen).
    first_station_mm, station_step_mm : (float, float)
        Paint Pn's station is ``first + (n - 1) × step``, machine mm from the origin.
    stations : mapping
        Paint id -> its own station (machine mm from the origin), where the row does not suit.
    """

    name: str
    bed_width_mm: float
    bed_height_mm: float
    scale: float | None = 1.0
    wall_at_mm: tuple[float, float] = (0.0, 0.0)
    origin: str = "top-left"
    paint_z_mm: float = 0.0
    lift_z_mm: float = 10.0
    dip_z_mm: float = 0.0
    paint_feed_mm_per_min: float = 15000.0
    plunge_feed_mm_per_min: float = 3000.0
    load_mm: float = 0.0
    first_station_mm: tuple[float, float] = (0.0, 0.0)
    station_step_mm: tuple[float, float] = (0.0, 0.0)
    stations: Mapping[str, tuple[float, float]] = field(default_factory=dict)

    def station_mm(self, paint_id: str, number: int) -> tuple[float, float]:
        """Where paint ``paint_id`` (the ``number``-th of the palette, from 1) is reloaded, machine mm."""
        if paint_id in self.stations:
            return self.stations[paint_id]
        fx, fy = self.first_station_mm
        sx, sy = self.station_step_mm
        return (fx + (number - 1) * sx, fy + (number - 1) * sy)


_KEYS = {
    "": {"format", "version", "name", "bed", "axes", "z", "feed", "reload"},
    "bed": {"width_mm", "height_mm", "scale", "wall_at_mm"},
    "axes": {"origin"},
    "z": {"paint_mm", "lift_mm"},
    "feed": {"paint_mm_per_min", "plunge_mm_per_min"},
    "reload": {"load_mm", "first_mm", "step_mm", "dip_mm", "stations"},
}


def _number(where: str, value, *, minimum: float | None = None, maximum: float | None = None,
            strict: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise MachineError(f"{where} must be a number, got {value!r}")
    if minimum is not None and (value <= minimum if strict else value < minimum):
        raise MachineError(f"{where} must be {'>' if strict else '>='} {minimum:g}, got {value!r}")
    if maximum is not None and value > maximum:
        raise MachineError(f"{where} must be <= {maximum:g}, got {value!r}")
    return float(value)


def _pair(where: str, value) -> tuple[float, float]:
    if not isinstance(value, list) or len(value) != 2:
        raise MachineError(f"{where} must be two numbers [x, y] in mm, got {value!r}")
    return (_number(where, value[0]), _number(where, value[1]))


def _table(doc: Mapping[str, Any], key: str, source: str) -> Mapping[str, Any]:
    value = doc.get(key, {})
    if not isinstance(value, dict):
        raise MachineError(f"{source}: [{key}] must be a table")
    unknown = sorted(set(value) - _KEYS[key])
    if unknown:
        raise MachineError(f"{source}: unknown key(s) {', '.join(unknown)} in [{key}]; "
                           f"valid: {', '.join(sorted(_KEYS[key]))}")
    return value


def profile_from_toml(text: str, *, source: str = "machine profile") -> MachineProfile:
    """Read a machine profile (TOML, format ``layerplan.machine`` version 1).

    Raises
    ------
    MachineError
        Naming ``source``, the key and the bad value: not TOML, another format or version, an
        unknown key, a missing bed size, a number out of range, an unknown origin.
    """
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise MachineError(f"{source} is not valid TOML: {exc}") from exc
    if doc.get("format") != FORMAT:
        raise MachineError(f"{source}: format must be {FORMAT!r}, got {doc.get('format')!r}")
    if doc.get("version") != VERSION:
        raise MachineError(f"{source}: version must be {VERSION}, got {doc.get('version')!r}")
    unknown = sorted(set(doc) - _KEYS[""])
    if unknown:
        raise MachineError(f"{source}: unknown key(s) {', '.join(unknown)}; valid: {', '.join(sorted(_KEYS['']))}")
    bed, axes, z, feed, reload = (_table(doc, k, source) for k in ("bed", "axes", "z", "feed", "reload"))
    if "width_mm" not in bed or "height_mm" not in bed:
        raise MachineError(f"{source}: [bed] needs width_mm and height_mm")
    scale = bed.get("scale", 1.0)
    if scale != "fit":
        scale = _number(f"{source}: bed.scale (or \"fit\")", scale, minimum=0, strict=True)
    origin = axes.get("origin", "top-left")
    if origin not in ORIGINS:
        raise MachineError(f"{source}: axes.origin must be one of {', '.join(ORIGINS)}, got {origin!r}")
    paint_z = _number(f"{source}: z.paint_mm", z.get("paint_mm", 0.0), maximum=0.0)
    stations = reload.get("stations", {})
    if not isinstance(stations, dict):
        raise MachineError(f"{source}: [reload.stations] must be a table of paint = [x, y]")
    name = doc.get("name", Path(source).stem)
    return MachineProfile(
        name=str(name),
        bed_width_mm=_number(f"{source}: bed.width_mm", bed["width_mm"], minimum=0, strict=True),
        bed_height_mm=_number(f"{source}: bed.height_mm", bed["height_mm"], minimum=0, strict=True),
        scale=None if scale == "fit" else scale,
        wall_at_mm=_pair(f"{source}: bed.wall_at_mm", bed.get("wall_at_mm", [0.0, 0.0])),
        origin=origin,
        paint_z_mm=paint_z,
        lift_z_mm=_number(f"{source}: z.lift_mm", z.get("lift_mm", 10.0), minimum=0, strict=True),
        dip_z_mm=_number(f"{source}: reload.dip_mm", reload.get("dip_mm", paint_z), maximum=0.0),
        paint_feed_mm_per_min=_number(f"{source}: feed.paint_mm_per_min", feed.get("paint_mm_per_min", 15000.0),
                                      minimum=0, strict=True),
        plunge_feed_mm_per_min=_number(f"{source}: feed.plunge_mm_per_min", feed.get("plunge_mm_per_min", 3000.0),
                                       minimum=0, strict=True),
        load_mm=_number(f"{source}: reload.load_mm", reload.get("load_mm", 0.0), minimum=0),
        first_station_mm=_pair(f"{source}: reload.first_mm", reload.get("first_mm", [0.0, 0.0])),
        station_step_mm=_pair(f"{source}: reload.step_mm", reload.get("step_mm", [0.0, 0.0])),
        stations={str(k): _pair(f"{source}: reload.stations.{k}", v) for k, v in stations.items()},
    )


def load_profile(path) -> MachineProfile:
    """Read a machine profile file (see :func:`profile_from_toml`).

    Raises
    ------
    MachineError
        If the file cannot be read, or is not a good profile (the message names the file).
    """
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise MachineError(f"cannot read machine profile {p}: {getattr(exc, 'strerror', None) or exc}") from exc
    return profile_from_toml(text, source=str(p))


def shipped_profile(name: str = DEFAULT_PROFILE) -> MachineProfile:
    """One of the profiles shipped with layerplan (a key of :data:`PROFILES`).

    Raises
    ------
    MachineError
        If ``name`` is not one of them (the message lists them).
    """
    if name not in PROFILES:
        raise MachineError(f"machine profile must be one of {', '.join(PROFILES)}, got {name!r}")
    return load_profile(Path(__file__).resolve().parent / "data" / PROFILES[name])


# ------------------------------------------------------------------------------ the frame
@dataclass(frozen=True)
class Frame:
    """Wall millimetres to machine millimetres for one plan on one machine.

    ``x_bed = wall_at_x + scale · x`` and ``y_bed = wall_at_y + scale · y`` place the wall on the bed
    seen from the front (top-left, y down); the origin corner then turns that into machine X, Y.
    """

    scale: float
    wall_at_mm: tuple[float, float]
    bed_mm: tuple[float, float]
    flip_x: bool
    flip_y: bool

    def on_bed(self, xy_mm: np.ndarray) -> np.ndarray:
        """(N, 2) wall mm -> (N, 2) bed mm as seen from the front (top-left, y down)."""
        return np.asarray(xy_mm, float).reshape(-1, 2) * self.scale + np.asarray(self.wall_at_mm)

    def to_machine(self, bed_mm: np.ndarray) -> np.ndarray:
        """(N, 2) bed mm seen from the front -> (N, 2) machine X, Y from the profile's origin."""
        out = np.array(bed_mm, float).reshape(-1, 2)
        if self.flip_x:
            out[:, 0] = self.bed_mm[0] - out[:, 0]
        if self.flip_y:
            out[:, 1] = self.bed_mm[1] - out[:, 1]
        return out

    def from_machine(self, xy: np.ndarray) -> np.ndarray:
        """Machine X, Y -> bed mm seen from the front (its own inverse: flips undo themselves)."""
        return self.to_machine(xy)


def frame_for(plan: Plan, profile: MachineProfile) -> Frame:
    """The :class:`Frame` of ``plan`` on ``profile``'s machine ("fit" worked out here)."""
    ax, ay = profile.wall_at_mm
    scale = profile.scale
    if scale is None:
        # as large as fits with the same margin on the far sides as wall_at_mm leaves on the near ones
        scale = min((profile.bed_width_mm - 2 * ax) / plan.wall_width_mm,
                    (profile.bed_height_mm - 2 * ay) / plan.wall_height_mm)
        if scale <= 0:
            raise MachineError(f"machine profile {profile.name!r}: bed.wall_at_mm ({ax:g}, {ay:g}) leaves no room "
                               f"on the {profile.bed_width_mm:g} × {profile.bed_height_mm:g} mm bed")
    flip_x, flip_y = ORIGINS[profile.origin]
    return Frame(float(scale), (ax, ay), (profile.bed_width_mm, profile.bed_height_mm), flip_x, flip_y)


# ------------------------------------------------------------------------------ the moves
@dataclass(frozen=True)
class Pass:
    """One brush-down pass: machine X, Y (N, 2) from the origin; ``reload_first`` is to visit the station first."""

    points: np.ndarray
    reload_first: bool = False


@dataclass(frozen=True)
class Run:
    """A layer's strokes of one paint, as the machine paints them.

    Attributes
    ----------
    layer : int
        From 1.
    paint : str
        Palette id.
    paint_number : int
        Position in the palette, from 1 (the HPGL pen).
    tool : int
        G-code tool number, 100 × layer + paint number.
    width_mm : float
        The brush at scale, machine mm.
    strokes : int
        Plan strokes in the run (coats not counted).
    station_mm : (float, float) or None
        The paint's station, machine X, Y; None when the profile never reloads.
    passes : tuple of Pass
        Bed-frame passes, in painting order (a stroke of two coats is two passes).
    painted_mm : float
        Brush-down length of the passes, machine mm.
    """

    layer: int
    paint: str
    paint_number: int
    tool: int
    width_mm: float
    strokes: int
    station_mm: tuple[float, float] | None
    passes: tuple[Pass, ...]
    painted_mm: float


def _length(pts: np.ndarray) -> float:
    return float(np.sum(np.hypot(*np.diff(pts, axis=0).T))) if len(pts) > 1 else 0.0


def _cut(pts: np.ndarray, at_mm: float) -> tuple[np.ndarray, np.ndarray]:
    """The polyline split where ``at_mm`` of its length is painted (0 < at_mm < length)."""
    seg = np.hypot(*np.diff(pts, axis=0).T)
    run = np.concatenate([[0.0], np.cumsum(seg)])
    k = int(np.searchsorted(run, at_mm, side="right")) - 1
    k = min(max(k, 0), len(seg) - 1)
    t = (at_mm - run[k]) / seg[k] if seg[k] > 0 else 0.0
    point = pts[k] + t * (pts[k + 1] - pts[k])
    return np.vstack([pts[: k + 1], point]), np.vstack([point, pts[k + 1:]])


def _passes(pts: np.ndarray, used_mm: float, load_mm: float, fresh: bool) -> tuple[list[Pass], float]:
    """One stroke's passes under a brush load; returns them and the load used after them.

    A brush that would run dry in the stroke is reloaded before it (``fresh`` asks for a reload first,
    as after a tool change); a stroke longer than a whole load is cut where the load runs out.
    """
    if load_mm <= 0:
        return [Pass(pts)], 0.0
    length = _length(pts)
    reload = fresh or used_mm + length > load_mm + 1e-9
    if reload:
        used_mm = 0.0
    out = []
    while length > load_mm + 1e-9:
        head, pts = _cut(pts, load_mm)
        out.append(Pass(head, reload))
        reload = True
        length = _length(pts)
    out.append(Pass(pts, reload))
    return out, (0.0 if len(out) > 1 else used_mm) + length


def layer_runs(layer) -> list[tuple[str, int, int]]:
    """A layer's paint runs as ``(paint, first, end)`` stroke positions: consecutive strokes of one paint.

    Plans made with runs (plan.json ``runs``) hold one per paint; older plans may change paint back
    and forth, and each stretch is a run, as the printed plan's time rule counts paint changes.
    """
    out = []
    start = 0
    strokes = layer.strokes
    for k in range(1, len(strokes) + 1):
        if k == len(strokes) or strokes[k].paint != strokes[start].paint:
            out.append((strokes[start].paint, start, k))
            start = k
    return out


def machine_runs(plan: Plan, profile: MachineProfile) -> tuple[Frame, list[Run]]:
    """The plan's paint runs as the machine paints them, checked against the bed.

    Parameters
    ----------
    plan : Plan
    profile : MachineProfile

    Returns
    -------
    frame : Frame
    runs : list of Run
        In painting order: layer by layer, run by run, strokes in the plan's (short-travel) order.

    Raises
    ------
    MachineError
        If the wall, a stroke or a reload station does not fit the bed, or a station lies on the wall
        (the message gives the sizes and what to change).
    """
    frame = frame_for(plan, profile)
    bed_w, bed_h = profile.bed_width_mm, profile.bed_height_mm
    corner = frame.on_bed([[plan.wall_width_mm, plan.wall_height_mm]])[0]
    ax, ay = profile.wall_at_mm
    if ax < -_ON_BED_MM or ay < -_ON_BED_MM or corner[0] > bed_w + _ON_BED_MM or corner[1] > bed_h + _ON_BED_MM:
        raise MachineError(
            f"the plan does not fit the machine: the {plan.wall_width_mm:g} × {plan.wall_height_mm:g} mm wall at "
            f"scale {frame.scale:g} placed at ({ax:g}, {ay:g}) mm reaches ({corner[0]:g}, {corner[1]:g}) mm, "
            f"but profile {profile.name!r} has a {bed_w:g} × {bed_h:g} mm bed; use a smaller scale (or \"fit\") "
            "or a bigger bed, or paint the wall in parts")
    numbers = {p.id: i + 1 for i, p in enumerate(plan.palette)}
    wall_lo, wall_hi = frame.on_bed([[0.0, 0.0]])[0], corner
    runs = []
    for n, layer in enumerate(plan.layers, start=1):
        width = layer.brush_width_mm * frame.scale
        for paint, a, b in layer_runs(layer):
            station = None
            if profile.load_mm > 0:
                station = profile.station_mm(paint, numbers[paint])
                front = frame.from_machine(np.array([station]))[0]
                if not (-_ON_BED_MM <= front[0] <= bed_w + _ON_BED_MM and -_ON_BED_MM <= front[1] <= bed_h + _ON_BED_MM):
                    raise MachineError(f"the reload station of {paint} at ({station[0]:g}, {station[1]:g}) mm is off "
                                       f"profile {profile.name!r}'s {bed_w:g} × {bed_h:g} mm bed")
                if np.all(front >= wall_lo - 0.5 * width) and np.all(front <= wall_hi + 0.5 * width):
                    raise MachineError(f"the reload station of {paint} at ({station[0]:g}, {station[1]:g}) mm is on "
                                       "the wall (a dip there would mark it); move it off the wall in the profile")
            passes: list[Pass] = []
            used, fresh = 0.0, True
            for s in layer.strokes[a:b]:
                pts = frame.to_machine(frame.on_bed(s.path_mm))
                for _ in range(s.coats):
                    more, used = _passes(pts, used, profile.load_mm, fresh)
                    passes += more
                    fresh = False
            for p in passes:
                front = frame.from_machine(p.points)
                if front.min() < -_ON_BED_MM or front[:, 0].max() > bed_w + _ON_BED_MM \
                        or front[:, 1].max() > bed_h + _ON_BED_MM:
                    raise MachineError(f"a stroke of layer {n} ({paint}) leaves profile {profile.name!r}'s bed")
            runs.append(Run(n, paint, numbers[paint], 100 * n + numbers[paint], width, b - a, station,
                            tuple(passes), sum(_length(p.points) for p in passes)))
    return frame, runs


# ------------------------------------------------------------------------------ the writers
def _comment(text: str) -> str:
    """An RS274NGC comment: parentheses may not nest, so none inside."""
    return "(" + text.replace("(", "[").replace(")", "]") + ")"


def gcode(plan: Plan, profile: MachineProfile) -> str:
    """The plan as an RS274NGC program (see the module notes). Raises MachineError as :func:`machine_runs`."""
    frame, runs = machine_runs(plan, profile)
    d = GCODE_DECIMALS

    def xy(p) -> str:
        return f"X{p[0]:.{d}f} Y{p[1]:.{d}f}"

    lift = f"G0 Z{profile.lift_z_mm:.{d}f}"
    down = f"G1 Z{profile.paint_z_mm:.{d}f} F{profile.plunge_feed_mm_per_min:g}"
    feed = f"F{profile.paint_feed_mm_per_min:g}"
    out = ["%", _comment("layerplan machine program"),
           _comment(f"profile: {profile.name}; plan: {plan.stroke_count()} strokes, {len(plan.palette)} paints, "
                    f"{len(plan.layers)} layers, {len(runs)} paint runs"),
           _comment(f"mm, absolute; X Y from the bed's {profile.origin} corner; wall at scale {frame.scale:g}; "
                    f"brush on the wall at Z<=0, lifted at Z{profile.lift_z_mm:g}"),
           _comment("tools: T<layer><paint>, e.g. T203 = layer 2's brush with paint P3")]
    for r in runs:
        out.append(_comment(f"T{r.tool}: layer {r.layer}, {r.paint}, {r.width_mm:g} mm brush"))
    out += ["G21 G90 G17 G94", lift]
    for k, r in enumerate(runs, start=1):
        out.append(_comment(f"run {k} of {len(runs)}: layer {r.layer}, {r.paint}, {r.strokes} strokes"))
        out.append(f"T{r.tool} M6")
        out.append(lift)
        for p in r.passes:
            if p.reload_first and r.station_mm is not None:
                out += [_comment(f"reload {r.paint}"), "G0 " + xy(r.station_mm),
                        f"G1 Z{profile.dip_z_mm:.{d}f} F{profile.plunge_feed_mm_per_min:g}", lift]
            out.append("G0 " + xy(p.points[0]))
            out.append(down)
            for q in p.points[1:]:
                out.append(f"G1 {xy(q)} {feed}")
            out.append(lift)
    out += ["M2", "%"]
    return "\n".join(out) + "\n"


def hpgl(plan: Plan, profile: MachineProfile) -> str:
    """The plan as HP-GL/2, one pen per paint (see the module notes). Raises MachineError as :func:`machine_runs`."""
    _, runs = machine_runs(plan, profile)
    out = ["IN;", "PA;"]
    for r in runs:
        out.append(f"SP{r.paint_number};")
        out.append(f"PW{r.width_mm:.3f},{r.paint_number};")
        for p in r.passes:
            u = np.rint(p.points * HPGL_UNITS_PER_MM).astype(np.int64)
            out.append(f"PU{u[0, 0]},{u[0, 1]};")
            if len(u) > 1:
                out.append("PD" + ",".join(f"{x},{y}" for x, y in u[1:]) + ";")
            else:
                out.append("PD;")
            out.append("PU;")
    out.append("SP0;")
    return "\n".join(out) + "\n"


def plotter_svg(plan: Plan, profile: MachineProfile) -> str:
    """The plan as plotter SVG: one group per paint run, in order, on the bed seen from the front."""
    import svgwrite

    frame, runs = machine_runs(plan, profile)
    bed_w, bed_h = profile.bed_width_mm, profile.bed_height_mm
    dwg = svgwrite.Drawing(size=(f"{bed_w:g}mm", f"{bed_h:g}mm"), viewBox=f"0 0 {bed_w:g} {bed_h:g}",
                           profile="full", debug=False)
    dwg.attribs["xmlns:inkscape"] = "http://www.inkscape.org/namespaces/inkscape"
    colours = {p.id: p.srgb for p in plan.palette}
    for k, r in enumerate(runs, start=1):
        label = f"{k} layer {r.layer} {r.paint} {r.width_mm:g}mm"
        g = dwg.g(id=f"run-{k:03d}", fill="none", stroke=colours[r.paint], stroke_width=f"{r.width_mm:.3f}",
                  stroke_linecap="round", stroke_linejoin="round",
                  **{"inkscape:groupmode": "layer", "inkscape:label": label})
        g.set_desc(title=f"run {k} of {len(runs)}: layer {r.layer}, paint {r.paint}, {r.strokes} strokes")
        for p in r.passes:
            pts = frame.from_machine(p.points)
            if len(pts) == 1:
                pts = np.vstack([pts, pts])  # a dab: a zero-length path draws a disc with round caps
            g.add(dwg.path(d="M" + " L".join(f"{x:.3f},{y:.3f}" for x, y in pts)))
        dwg.add(g)
    return dwg.tostring() + "\n"


@dataclass(frozen=True)
class MachineFormat:
    """One kind of machine program: its writer, file name ending and media type."""

    key: str
    label: str
    suffix: str
    media_type: str
    write: Any


#: the machine program formats, by the name ``--format`` and the web page give them
FORMATS: Mapping[str, MachineFormat] = {f.key: f for f in (
    MachineFormat("gcode", "G-code (RS274NGC)", ".nc", "text/x-gcode", gcode),
    MachineFormat("hpgl", "HPGL (pen plotter)", ".plt", "application/vnd.hp-hpgl", hpgl),
    MachineFormat("svg", "SVG, a group per paint run (pen plotter)", ".svg", "image/svg+xml", plotter_svg),
)}


def machine_program(plan: Plan, profile: MachineProfile, fmt: str) -> bytes:
    """The plan as a machine program in format ``fmt`` (a key of :data:`FORMATS`), UTF-8 bytes.

    Raises
    ------
    MachineError
        An unknown format (the message lists the valid ones), or a plan the machine cannot paint.
    """
    if fmt not in FORMATS:
        raise MachineError(f"machine format must be one of {', '.join(FORMATS)}, got {fmt!r}")
    return FORMATS[fmt].write(plan, profile).encode("utf-8")
