"""The placer's benchmark: ``python -m bench [--quick]``.

For each public-domain scikit-image photo (coffee, astronaut, chelsea) at fixed
settings (8 paints, brushes 100/50/25 mm, 5 mm per pixel, seed 0, wall = photo
pixels × 5 mm so the working raster is the photo's own resolution) it reports the
plan's mean CIEDE2000 against the fitted target, the floor (every pixel its nearest
palette paint), their ratio, stroke count and time; the same for the Hertzmann (1998)
baseline of ``bench/hertzmann.py`` on the same palette, ground and brushes; the
machine-independent unit (one :func:`layerplan.colour.error_planes` of the raster
and palette) and plan time / unit. Then, each in a fresh subprocess: scaling at
0.25, 0.5, 1 and 2 megapixels (time and peak resident memory), the memory figure at
2 megapixels with 16 paints, and the four-brush figure (1 megapixel, 8 paints, the
CLI's default brushes 100/50/25/12 mm). Then what one run per paint per layer costs:
each photo planned at seeds 0, 1 and 2 with runs (the product) and without (strokes
placed freely and grouped by paint afterwards where the picture allows), at the same
stroke cost. Every target the placer is held to (see ``TARGET_*``) is checked and
printed PASS or FAIL.
Results go to ``bench/results.md`` (``bench/results-quick.md`` with ``--quick``).

References
----------
A. Hertzmann, "Painterly Rendering with Curved Brush Strokes of Multiple Sizes",
Proc. SIGGRAPH 98, 1998 (the baseline).
G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula", Color Res.
Appl. 30(1), 2005 (the error measure).
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import math
import os
import platform
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
PHOTOS = ("coffee", "astronaut", "chelsea")
PAINTS = 8
BRUSHES_MM = (100.0, 50.0, 25.0)
MM_PER_PX = 5.0
SEED = 0
SCALING_MP = (0.25, 0.5, 1.0, 2.0)
MEMORY_MP, MEMORY_PAINTS = 2.0, 16
#: the four-brush figure: a 1 MP plan with the CLI's default brushes, at the CLI's default pixel rule
#: (the 12 mm brush spans 3 px)
FOUR_BRUSH_MP, FOUR_BRUSH_BRUSHES_MM = 1.0, (100.0, 50.0, 25.0, 12.0)
FOUR_BRUSH_MM_PER_PX = 4.0
SCALING_PHOTO = "coffee"
#: seeds of the with/without-runs comparison (the first is the photos' own plan)
RUNS_SEEDS = (0, 1, 2)

# targets the placer is held to: close to the palette's floor, better than the published baseline with a
# fraction of its strokes, time and memory about linear in pixels, and a default plan well under a minute
TARGET_RATIO = 1.12
TARGET_STROKE_SHARE = 0.20
TARGET_UNITS = 10.0
TARGET_RSS_GB = 1.5
TARGET_FOUR_BRUSH_S = 60.0
#: one run per paint per layer may cost at most this much more mean ΔE00 than placing freely (over the seeds)
TARGET_RUNS_COST = 0.01
#: "about linear": log-log slope of time (and of memory above the idle process) vs pixels
TARGET_SLOPE = 1.2
#: unit timings are the median of this many runs (plan runs are single)
UNIT_REPEATS = 3


# ---------------------------------------------------------------- helpers
def photo(name: str) -> np.ndarray:
    from skimage import data

    return np.ascontiguousarray(getattr(data, name)()[..., :3])


def raster_for(img: np.ndarray, megapixels: float | None) -> tuple[int, int]:
    """(width_px, height_px): the photo's own size, or scaled to about ``megapixels``."""
    h, w = img.shape[:2]
    if megapixels is None:
        return w, h
    k = math.sqrt(megapixels * 1e6 / (w * h))
    return max(8, int(round(w * k))), max(8, int(round(h * k)))


def settings_for(width_px: int, height_px: int, *, paints=PAINTS, brushes=BRUSHES_MM, mm_per_px=MM_PER_PX,
                 free_palette=False, seed=SEED):
    from layerplan.settings import Settings

    extra = {"free_palette": True} if free_palette else {}
    return Settings(wall_width_mm=width_px * mm_per_px, wall_height_mm=height_px * mm_per_px, fit="cover",
                    paints=paints, brushes_mm=tuple(brushes), mm_per_px=mm_per_px, seed=seed, **extra)


def vm_kb(field: str) -> int:
    """A field of /proc/self/status in kB (VmHWM = peak resident set, VmRSS = now)."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith(field + ":"):
                return int(line.split()[1])
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # Linux: kB


def timed(fn, *args, **kw):
    w0, c0 = time.perf_counter(), time.process_time()
    out = fn(*args, **kw)
    return out, time.perf_counter() - w0, time.process_time() - c0


def unit_time(target_lab, pal_lab, repeats=UNIT_REPEATS):
    """Median wall and CPU time of one error_planes of the raster and palette, and the planes."""
    from layerplan.colour import error_planes

    times, cpus = [], []
    planes = None
    for _ in range(repeats):
        planes, t, c = timed(error_planes, target_lab, pal_lab)
        times.append(t)
        cpus.append(c)
    return float(np.median(times)), float(np.median(cpus)), planes


def stage_times(events, t_end) -> dict:
    """Seconds spent per pipeline stage, from the progress messages (all layers summed as "layers")."""
    out: dict[str, float] = {}
    for k, (t, msg) in enumerate(events):
        key = msg.split(":")[0].strip()
        if key.startswith("layer "):
            key = "layers"
        nxt = events[k + 1][0] if k + 1 < len(events) else t_end
        out[key] = out.get(key, 0.0) + max(0.0, nxt - t)
    return out


def warm_up():
    """Load numba caches / compile once, outside every timing: the product's warm-up, then the baseline."""
    from bench.hertzmann import baseline_plan
    from layerplan.warm import warm_up as warm_planner

    tiny, plan = warm_planner()
    baseline_plan(tiny, plan)
    # the comparison without runs orders strokes with code the product no longer uses
    from layerplan.pipeline import make_plan
    from layerplan.settings import Settings

    make_plan(tiny, Settings(wall_width_mm=360.0, wall_height_mm=240.0, paints=3, brushes_mm=(60.0, 20.0),
                             mm_per_px=5.0), runs=None)


def paint_runs(plan) -> list[int]:
    """Runs per layer in the stroke list: one brush wash each (a paint change starts a new run)."""
    return [sum(1 for a, b in zip(layer.strokes, layer.strokes[1:]) if a.paint != b.paint) + bool(layer.strokes)
            for layer in plan.layers]


def measure_plan(img, settings, *, unit_repeats=UNIT_REPEATS, with_baseline=False, keep_peak=False,
                 runs="default"):
    """Plan one photo and measure it (see module docstring). Returns a dict.

    ``runs`` is passed to make_plan unless "default" (None: no runs, strokes placed freely).
    """
    from layerplan import colour, raster
    from layerplan.fit import fit_to_wall
    from layerplan.pipeline import make_plan

    rss_idle = vm_kb("VmRSS")
    events = []

    def progress(fraction, message):
        events.append((time.perf_counter(), message))

    t0 = time.perf_counter()
    kw = {} if runs == "default" else {"runs": runs}
    plan, t_plan, c_plan = timed(make_plan, img, settings, progress=progress, **kw)
    t_end = t0 + t_plan
    peak_kb = vm_kb("VmHWM") if keep_peak else None
    target = fit_to_wall(img, plan.width_px, plan.height_px, fit=settings.fit)[0]
    # the floor and the unit use the paints as rendered (their srgb), like final.png
    pal_lab = colour.srgb_to_lab(plan.palette_rgb())
    target_lab = colour.srgb_to_lab(target)
    t_unit, c_unit, planes = unit_time(target_lab, pal_lab, unit_repeats)
    floor = float(planes.min(axis=2).mean(dtype=np.float64))
    del planes
    rendered = raster.render(plan)
    de = colour.mean_delta_e00(rendered, target)
    out = {
        "raster": [plan.width_px, plan.height_px], "megapixels": plan.width_px * plan.height_px / 1e6,
        "paints": len(plan.palette), "brushes_mm": [layer.brush_width_mm for layer in plan.layers],
        "mm_per_px": plan.mm_per_px, "de": de, "floor": floor, "ratio": de / floor,
        "strokes": plan.stroke_count(), "layer_strokes": [len(layer.strokes) for layer in plan.layers],
        "runs": paint_runs(plan), "layer_paints": [len({s.paint for s in layer.strokes}) for layer in plan.layers],
        "time_s": t_plan, "cpu_s": c_plan, "unit_s": t_unit, "units": t_plan / t_unit,
        "unit_cpu_s": c_unit, "units_cpu": c_plan / c_unit,
        "rss_idle_mb": rss_idle / 1024, "stages_s": stage_times(events, t_end),
        # what the order of work costs on the wall: lifted-brush travel per layer (plan.json's layer
        # "travel", after and before the short-travel order) and strokes by the coats they take
        "travel": [{k: (layer.extra.get("travel") or {}).get(k) for k in ("painted_m", "lifted_m", "lifted_before_m")}
                   for layer in plan.layers],
        "coats": [{str(c): sum(1 for s in layer.strokes if s.coats == c) for c in sorted({s.coats for s in layer.strokes})}
                  for layer in plan.layers],
    }
    if peak_kb is not None:
        out["peak_rss_mb"] = peak_kb / 1024
    if with_baseline:
        from bench.hertzmann import baseline_plan

        bplan, t_b, c_b = timed(baseline_plan, target, plan, seed=SEED)
        de_b = colour.mean_delta_e00(raster.render(bplan), target)
        out["baseline"] = {"de": de_b, "ratio": de_b / floor, "strokes": bplan.stroke_count(),
                           "layer_strokes": [len(layer.strokes) for layer in bplan.layers],
                           "time_s": t_b, "cpu_s": c_b, "stops": [layer.extra["stops"] for layer in bplan.layers]}
    return out, plan, target


# ------------------------------------------------------------ child runs
def child(spec: dict) -> dict:
    """One measurement in this fresh process; peak RSS is the plan's (read right after it)."""
    warm_up()
    img = photo(spec["photo"])
    w, h = raster_for(img, spec["megapixels"])
    settings = settings_for(w, h, paints=spec["paints"], brushes=spec["brushes_mm"], mm_per_px=spec["mm_per_px"],
                            free_palette=spec.get("free_palette", False))
    out, plan, target = measure_plan(img, settings, unit_repeats=spec.get("unit_repeats", 1), keep_peak=True)
    out["photo"] = spec["photo"]
    out["paints_requested"] = spec["paints"]
    if spec.get("final_png"):
        from PIL import Image

        from layerplan import colour, raster
        from layerplan.export import write_outputs

        with tempfile.TemporaryDirectory() as tmp:
            _, t_exp, _ = timed(write_outputs, plan, Path(tmp) / "plan")
            final = np.asarray(Image.open(Path(tmp) / "plan" / "final.png").convert("RGB"))
        out["export_s"] = t_exp
        out["final_png_de"] = colour.mean_delta_e00(final, target)
        out["final_png_is_render"] = bool(np.array_equal(final, raster.render(plan)))
    return out


def run_child(spec: dict) -> dict:
    """Run :func:`child` in a fresh interpreter; also read RUSAGE_CHILDREN as a cross-check."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "bench", "--child", json.dumps(spec)], cwd=HERE.parent,
                          capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(f"bench child {spec} failed:\n{proc.stderr[-3000:]}")
    out = json.loads(proc.stdout.strip().splitlines()[-1])
    after = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    out["process_s"] = time.perf_counter() - t0
    # ru_maxrss of children is the largest so far: informative only when it grew
    out["children_maxrss_mb"] = after / 1024 if after > before else None
    return out


# --------------------------------------------------------------- machine
def machine() -> dict:
    import numba
    import skimage

    cpu = "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    ram = "unknown"
    try:
        kb = int(Path("/proc/meminfo").read_text().split("MemTotal:")[1].split()[0])
        ram = f"{kb / 1024 ** 2:.1f} GiB"
    except (OSError, IndexError, ValueError):
        pass
    load = os.getloadavg() if hasattr(os, "getloadavg") else (float("nan"),) * 3
    return {"nproc": os.cpu_count(), "cpu": cpu, "ram": ram, "python": platform.python_version(),
            "numpy": np.__version__, "numba": numba.__version__, "scikit-image": skimage.__version__,
            "platform": platform.platform(), "date": _dt.datetime.now().astimezone().isoformat(timespec="seconds"),
            "load_before": " ".join(f"{x:.2f}" for x in load)}


def slope(xs, ys) -> float:
    """Least-squares slope of log y against log x."""
    lx, ly = np.log(np.asarray(xs, float)), np.log(np.asarray(ys, float))
    return float(np.polyfit(lx, ly, 1)[0])


# ---------------------------------------------------------------- report
def runs_summary(runs_cmp) -> dict:
    """Per photo, over the seeds: mean ΔE00 and strokes with and without runs, and the relative ΔE00 change."""
    out = {}
    for r in runs_cmp:
        out.setdefault(r["photo"], []).append(r)
    summary = {}
    for name, rows in out.items():
        de_with = float(np.mean([r["with"]["de"] for r in rows]))
        de_without = float(np.mean([r["without"]["de"] for r in rows]))
        summary[name] = {"seeds": [r["seed"] for r in rows], "de_with": de_with, "de_without": de_without,
                         "cost": de_with / de_without - 1.0,
                         "strokes_with": float(np.mean([r["with"]["strokes"] for r in rows])),
                         "strokes_without": float(np.mean([r["without"]["strokes"] for r in rows])),
                         "time_with": float(np.mean([r["with"]["time_s"] for r in rows])),
                         "time_without": float(np.mean([r["without"]["time_s"] for r in rows])),
                         "units_with": float(np.mean([r["with"]["units"] for r in rows])),
                         "units_without": float(np.mean([r["without"]["units"] for r in rows]))}
    return summary


def checks(photos, scaling, memory, four_brush, runs_cmp=()) -> list[tuple[str, bool, str]]:
    out = []
    for p in photos:
        out.append((f"{p['photo']}: one run per paint in every layer", p["runs"] == p["layer_paints"],
                    f"runs per layer {'/'.join(map(str, p['runs']))}, paints per layer "
                    f"{'/'.join(map(str, p['layer_paints']))}"))
    for name, r in runs_summary(runs_cmp).items():
        out.append((f"{name}: one run per paint costs < {TARGET_RUNS_COST:.0%} more ΔE00 than placing freely "
                    f"(mean of seeds {', '.join(map(str, r['seeds']))})", r["cost"] < TARGET_RUNS_COST,
                    f"ΔE00 {r['de_with']:.3f} vs {r['de_without']:.3f} ({r['cost']:+.2%}), strokes "
                    f"{r['strokes_with']:.0f} vs {r['strokes_without']:.0f}"))
    for p in photos:
        out.append((f"{p['photo']}: ΔE00 ≤ {TARGET_RATIO} × floor", p["ratio"] <= TARGET_RATIO,
                    f"ratio {p['ratio']:.3f}"))
    for p in photos:
        b = p["baseline"]
        share = p["strokes"] / b["strokes"]
        out.append((f"{p['photo']}: ΔE00 below baseline with ≤ {TARGET_STROKE_SHARE:.0%} of its strokes",
                    p["de"] < b["de"] and share <= TARGET_STROKE_SHARE,
                    f"ΔE00 {p['de']:.2f} vs {b['de']:.2f}, strokes {p['strokes']} = {share:.0%} of {b['strokes']}"))
    for p in photos + [s for s in scaling if s["megapixels"] > 0.9 and s["megapixels"] < 1.1]:
        label = p["photo"] + ("" if p in photos else f" at {p['megapixels']:.2f} MP")
        out.append((f"{label}: plan time ≤ {TARGET_UNITS:g} units", p["units"] <= TARGET_UNITS,
                    f"{p['time_s']:.2f} s = {p['units']:.1f} units of {p['unit_s']:.2f} s "
                    f"(by CPU time {p['units_cpu']:.1f} units)"))
    mp = [s["megapixels"] for s in scaling]
    ts = slope(mp, [s["time_s"] for s in scaling])
    out.append((f"time about linear in pixels (log-log slope ≤ {TARGET_SLOPE})", ts <= TARGET_SLOPE,
                f"slope {ts:.2f}"))
    extra = [max(1.0, s["peak_rss_mb"] - s["rss_idle_mb"]) for s in scaling]
    ms = slope(mp, extra)
    out.append((f"memory above the idle process about linear (slope ≤ {TARGET_SLOPE})", ms <= TARGET_SLOPE,
                f"slope {ms:.2f}"))
    asked = memory.get("paints_requested", memory["paints"])
    got = "" if asked == memory["paints"] else f" ({memory['paints']} after merging equal mixes)"
    out.append((f"peak RSS < {TARGET_RSS_GB} GB at {memory['megapixels']:.2f} MP, {asked} paints{got}",
                memory["peak_rss_mb"] < TARGET_RSS_GB * 1000, f"{memory['peak_rss_mb']:.0f} MB"))
    out.append((f"four brushes: {four_brush['megapixels']:.2f} MP under {TARGET_FOUR_BRUSH_S:g} s",
                four_brush["time_s"] < TARGET_FOUR_BRUSH_S, f"{four_brush['time_s']:.1f} s"))
    return out


def render_md(info, photos, scaling, memory, four_brush, results, quick, total_s, runs_cmp=()) -> tuple[str, str]:
    L = []
    L.append("# layerplan placer benchmark" + (" (quick smoke run: small rasters, not the figures)" if quick else ""))
    if quick:
        L.append("")
        L.append("Quick mode: one photo at 0.05 MP, scaling at 0.02/0.04/0.08 MP, memory and four-brush rows at small "
                 "sizes; the sizes named under Method are those of the full run.")
    L.append("")
    L.append("Produced by `python -m bench" + (" --quick" if quick else "") + "` (bench/__main__.py). "
             "Timings on a shared machine are noisy; rerun before quoting.")
    L.append("")
    L.append("## Machine")
    L.append("")
    L.append(f"- {info['nproc']} CPUs (`nproc`), {info['cpu']}, {info['ram']} RAM, load average before the run "
             f"{info['load_before']}")
    L.append(f"- Python {info['python']}, numpy {info['numpy']}, numba {info['numba']}, "
             f"scikit-image {info['scikit-image']}; {info['platform']}")
    L.append(f"- date {info['date']}; whole run {total_s / 60:.1f} min; palette: {info['palette']}")
    L.append("")
    L.append("## Method")
    L.append("")
    L.append(f"- Photos: scikit-image `data.{'`, `data.'.join(PHOTOS)}` (public domain). Settings: {PAINTS} paints, "
             f"brushes {'/'.join(f'{b:g}' for b in BRUSHES_MM)} mm, {MM_PER_PX:g} mm per pixel, seed {SEED}, "
             "fit `cover`, wall = raster pixels × mm per pixel (so at full size the raster is the photo itself).")
    L.append("- ΔE00: mean CIEDE2000 of the rendered plan (layerplan.raster.render, i.e. final.png) against the "
             "fitted target (layerplan.fit.fit_to_wall of the photo on the plan's raster — what the plan aims at). "
             "Floor: every pixel given its nearest palette paint by CIEDE2000, same raster and palette (the plan's "
             "paints as rendered, i.e. the CIELAB of their srgb). Ratio = ΔE00 / floor.")
    L.append("- Baseline: bench/hertzmann.py, Hertzmann (SIGGRAPH 1998) with the paper's \"Impressionist\" "
             "parameters T = 100 (RGB 0–255 distance), f_σ = 0.5, f_c = 1, f_g = 1, minLength 4, maxLength 16, "
             "R = brush width / 2 in pixels, strokes painted in random order per layer; stroke colour = palette paint "
             "nearest by CIEDE2000 to the reference colour at the stroke start; same palette, ground and brushes as "
             "the plan, painted by layerplan's rendering rule.")
    L.append(f"- Unit: wall time of one `layerplan.colour.error_planes(target_lab, palette_lab)` on the raster and "
             f"palette (median of {UNIT_REPEATS} on the photos, 1 in the subprocess runs; CIELAB conversion not "
             "included). Plan time = wall time of `make_plan` (fit, palette, planes, layers, order), after a warm-up "
             "that loads numba's compiled code; CPU time shown beside it.")
    L.append("- Scaling, memory and four-brush rows: each in a fresh `python -m bench --child` process; photo "
             f"`{SCALING_PHOTO}` resampled by the product's own fit to the raster size; peak RSS = VmHWM of that "
             "process read right after `make_plan` (includes the interpreter, numpy, scikit-image and numba, "
             "\"idle\" = VmRSS just before `make_plan`).")
    L.append("- Caveat on scaling: the bigger rasters are the same photo upsampled, so they hold less detail per "
             "pixel and need fewer strokes per pixel; a slope below 1 partly reflects that. Timings are judged on "
             "wall time, what a painter waits for; the CPU-time ratio (the placer and `error_planes` are "
             "single-threaded) is shown in brackets because other jobs share this machine.")
    L.append(f"- Four-brush figure: {FOUR_BRUSH_MP:g} MP, {PAINTS} paints, brushes "
             f"{'/'.join(f'{b:g}' for b in FOUR_BRUSH_BRUSHES_MM)} mm at {FOUR_BRUSH_MM_PER_PX:g} mm per pixel "
             "(the CLI's "
             "default rule: the narrowest brush spans 3 px); ΔE00 of final.png as written by "
             "`layerplan.export.write_outputs`, read back, against the fitted target.")
    L.append(f"- Runs: every plan paints each paint of a layer in one run (one brush wash per paint and layer); the "
             f"placer fixes the order of the runs before each layer (largest first: the paint with the most error "
             f"to take away where it is the best paint) and places every stroke into its paint's run. \"Without "
             f"runs\" is `make_plan(..., runs=None)`: each stroke painted over the ones placed before it, then "
             f"grouped by paint where the picture allows (several runs of a paint per layer). Same settings and "
             f"stroke cost, seeds {', '.join(map(str, RUNS_SEEDS))}.")
    L.append("")
    L.append("## Photos")
    L.append("")
    L.append("| photo | raster | floor | plan ΔE00 | ratio | strokes (per layer) | plan s (CPU s) | unit s | units "
             "(CPU) | baseline ΔE00 | ratio | strokes (per layer) | baseline s | plan strokes / baseline |")
    L.append("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for p in photos:
        b = p["baseline"]
        L.append(f"| {p['photo']} | {p['raster'][0]}×{p['raster'][1]} | {p['floor']:.3f} | {p['de']:.3f} | "
                 f"{p['ratio']:.3f} | {p['strokes']} ({'/'.join(map(str, p['layer_strokes']))}) | "
                 f"{p['time_s']:.2f} ({p['cpu_s']:.2f}) | {p['unit_s']:.3f} | {p['units']:.1f} ({p['units_cpu']:.1f}) | "
                 f"{b['de']:.3f} | "
                 f"{b['ratio']:.3f} | {b['strokes']} ({'/'.join(map(str, b['layer_strokes']))}) | "
                 f"{b['time_s']:.2f} | {p['strokes'] / b['strokes']:.0%} |")
    L.append("")
    L.append("Where the plan time goes (from make_plan's progress messages; \"layers\" = placing and ordering):")
    L.append("")
    for p in photos:
        L.append(f"- {p['photo']}: " + ", ".join(f"{k} {v:.2f} s" for k, v in p["stages_s"].items() if v >= 0.005)
                 + f"; layers alone = {p['stages_s'].get('layers', 0.0) / p['unit_s']:.1f} units")
    L.append("")
    L.append("Brush travel per layer (painted / lifted m, lifted before the short-travel order in brackets) and "
             "strokes by coats (from what each stroke covers, `layerplan.coats`):")
    L.append("")
    for p in photos:
        if "travel" not in p:
            continue
        travel = " · ".join(f"{t['painted_m']:.1f} / {t['lifted_m']:.1f} ({t['lifted_before_m']:.1f})"
                            if t.get("lifted_m") is not None else "—" for t in p["travel"])
        coats = " · ".join(", ".join(f"{n}×{c}" for c, n in layer.items()) or "—" for layer in p["coats"])
        L.append(f"- {p['photo']}: travel {travel}; coats (strokes×coats) {coats}")
    L.append("")
    L.append("Baseline strokes by why they stopped (per layer): " + "; ".join(
        f"{p['photo']}: " + " / ".join(", ".join(f"{k} {v}" for k, v in s.items() if v) for s in p["baseline"]["stops"])
        for p in photos))
    L.append("")
    if runs_cmp:
        L.append("## One run per paint per layer: what it costs")
        L.append("")
        L.append("| photo | seed | with runs: ΔE00 | strokes | runs per layer | plan s (units) | without: ΔE00 | strokes "
                 "| runs per layer | plan s (units) | ΔE00 with / without |")
        L.append("|---|---|---|---|---|---|---|---|---|---|---|")
        for r in runs_cmp:
            a, b = r["with"], r["without"]
            L.append(f"| {r['photo']} | {r['seed']} | {a['de']:.3f} | {a['strokes']} | {'/'.join(map(str, a['runs']))} | "
                     f"{a['time_s']:.2f} ({a['units']:.1f}) | {b['de']:.3f} | {b['strokes']} | "
                     f"{'/'.join(map(str, b['runs']))} | {b['time_s']:.2f} ({b['units']:.1f}) | "
                     f"{a['de'] / b['de'] - 1:+.2%} |")
        L.append("")
        for name, r in runs_summary(runs_cmp).items():
            L.append(f"- {name}, mean of seeds {', '.join(map(str, r['seeds']))}: ΔE00 {r['de_with']:.3f} with runs vs "
                     f"{r['de_without']:.3f} without ({r['cost']:+.2%}); strokes {r['strokes_with']:.0f} vs "
                     f"{r['strokes_without']:.0f}; plan time {r['time_with']:.2f} s vs {r['time_without']:.2f} s "
                     f"({r['units_with']:.1f} vs {r['units_without']:.1f} units)")
        L.append("")
    L.append("## Scaling (fresh process per size)")
    L.append("")
    L.append("| MP | raster | paints | plan s (CPU s) | s per MP | of which layers s | unit s | units (CPU) "
             "| peak RSS MB | idle RSS MB | ΔE00 | ratio | strokes |")
    L.append("|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for s in scaling + [memory]:
        L.append(f"| {s['megapixels']:.2f} | {s['raster'][0]}×{s['raster'][1]} | {s['paints']} | "
                 f"{s['time_s']:.2f} ({s['cpu_s']:.2f}) | {s['time_s'] / s['megapixels']:.1f} | "
                 f"{s['stages_s'].get('layers', 0.0):.2f} | {s['unit_s']:.2f} | "
                 f"{s['units']:.1f} ({s['units_cpu']:.1f}) | {s['peak_rss_mb']:.0f} | {s['rss_idle_mb']:.0f} | {s['de']:.3f} | "
                 f"{s['ratio']:.3f} | {s['strokes']} |")
    L.append("")
    L.append("## Four-brush figure")
    L.append("")
    fb = four_brush
    L.append(f"- {fb['megapixels']:.2f} MP ({fb['raster'][0]}×{fb['raster'][1]} at {fb['mm_per_px']:g} mm/px), "
             f"{fb['paints']} paints, brushes {'/'.join(f'{b:g}' for b in fb['brushes_mm'])} mm: plan "
             f"{fb['time_s']:.1f} s (CPU {fb['cpu_s']:.1f} s; writing the outputs {fb['export_s']:.1f} s more), "
             f"mean ΔE00 of final.png {fb['final_png_de']:.3f} (floor {fb['floor']:.3f}, ratio {fb['ratio']:.3f}), "
             f"{fb['strokes']} strokes, peak RSS {fb['peak_rss_mb']:.0f} MB; final.png equals the render: "
             f"{'yes' if fb['final_png_is_render'] else 'NO'}.")
    L.append("")
    L.append("## Targets")
    L.append("")
    for name, ok, detail in results:
        L.append(f"- **{'PASS' if ok else 'FAIL'}** {name}: {detail}")
    L.append("")
    summary = summary_table(photos, scaling, memory, four_brush)
    L.append("## Summary for the README")
    L.append("")
    L.append(summary)
    return "\n".join(L) + "\n", summary


def summary_table(photos, scaling, memory, four_brush) -> str:
    S = ["| photo | floor ΔE00 | plan ΔE00 (× floor) | strokes | plan time | baseline ΔE00 (× floor) "
         "| baseline strokes |", "|---|---|---|---|---|---|---|"]
    for p in photos:
        b = p["baseline"]
        S.append(f"| {p['photo']} ({p['raster'][0]}×{p['raster'][1]}) | {p['floor']:.2f} | {p['de']:.2f} "
                 f"({p['ratio']:.2f}×) | {p['strokes']} | {p['time_s']:.1f} s = {p['units']:.1f} units | "
                 f"{b['de']:.2f} ({b['ratio']:.2f}×) | {b['strokes']} |")
    one = min(scaling, key=lambda s: abs(s["megapixels"] - 1.0))
    S.append("")
    S.append(f"Scaling ({PAINTS} paints, {len(BRUSHES_MM)} brushes): " + ", ".join(
        f"{s['megapixels']:.2f} MP {s['time_s']:.1f} s / {s['peak_rss_mb']:.0f} MB" for s in scaling)
        + f"; {memory['megapixels']:.2f} MP with {memory['paints']} paints {memory['time_s']:.1f} s / "
          f"{memory['peak_rss_mb']:.0f} MB peak. {one['megapixels']:.2f} MP: {one['time_s']:.1f} s. Four "
          f"brushes ({four_brush['megapixels']:.2f} MP): {four_brush['time_s']:.1f} s, final.png ΔE00 "
          f"{four_brush['final_png_de']:.2f}.")
    return "\n".join(S)


# ------------------------------------------------------------------ main
def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="python -m bench", description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true", help="one photo, small rasters: a smoke check")
    ap.add_argument("--free-palette", action="store_true",
                    help="plan with the k-means palette as is (no snapping to mixable recipes): the placer alone")
    ap.add_argument("--out", type=Path, help="results file (default bench/results.md, or results-quick.md)")
    ap.add_argument("--child", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        print(json.dumps(child(json.loads(args.child))))
        return 0
    t_start = time.perf_counter()
    info = machine()
    stem = "results" + ("-quick" if args.quick else "") + ("-free-palette" if args.free_palette else "")
    out_path = args.out or HERE / f"{stem}.md"

    def say(msg):
        print(f"[{time.perf_counter() - t_start:6.1f} s] {msg}", file=sys.stderr, flush=True)

    say("warm-up (numba caches)")
    warm_up()
    photos = []
    for name in PHOTOS[:1] if args.quick else PHOTOS:
        img = photo(name)
        if args.quick:
            w, h = raster_for(img, 0.05)
        else:
            w, h = raster_for(img, None)
        say(f"{name}: plan + baseline at {w}x{h}")
        res, _, _ = measure_plan(img, settings_for(w, h, free_palette=args.free_palette), with_baseline=True)
        res["photo"] = name
        photos.append(res)
        say(f"  plan ΔE00 {res['de']:.3f} (floor {res['floor']:.3f}, ratio {res['ratio']:.3f}), {res['strokes']} "
            f"strokes, {res['time_s']:.2f} s = {res['units']:.1f} units; baseline ΔE00 {res['baseline']['de']:.3f}, "
            f"{res['baseline']['strokes']} strokes")
    runs_cmp = []
    for res in photos:
        img = photo(res["photo"])
        w, h = res["raster"]
        for seed in RUNS_SEEDS[:1] if args.quick else RUNS_SEEDS:
            say(f"{res['photo']}: with and without runs, seed {seed}")
            st = settings_for(w, h, free_palette=args.free_palette, seed=seed)
            with_runs = res if seed == SEED else measure_plan(img, st, unit_repeats=1)[0]
            without = measure_plan(img, st, unit_repeats=1, runs=None)[0]
            keep = ("de", "strokes", "layer_strokes", "runs", "layer_paints", "time_s", "units")
            runs_cmp.append({"photo": res["photo"], "seed": seed, "with": {k: with_runs[k] for k in keep},
                             "without": {k: without[k] for k in keep}})
            say(f"  ΔE00 {with_runs['de']:.3f} vs {without['de']:.3f}, strokes {with_runs['strokes']} vs "
                f"{without['strokes']}, runs {with_runs['runs']} vs {without['runs']}")
    sizes = (0.02, 0.04, 0.08) if args.quick else SCALING_MP
    base = {"photo": SCALING_PHOTO, "paints": PAINTS, "brushes_mm": list(BRUSHES_MM), "mm_per_px": MM_PER_PX,
            "free_palette": args.free_palette}
    scaling = []
    for mp in sizes:
        say(f"scaling: {mp:g} MP in a fresh process")
        scaling.append(run_child({**base, "megapixels": mp}))
        s = scaling[-1]
        say(f"  {s['time_s']:.2f} s, peak RSS {s['peak_rss_mb']:.0f} MB, {s['units']:.1f} units")
    mem_mp = sizes[-1] if args.quick else MEMORY_MP
    say(f"memory: {mem_mp:g} MP, {MEMORY_PAINTS} paints in a fresh process")
    memory = run_child({**base, "megapixels": mem_mp, "paints": MEMORY_PAINTS})
    say(f"  {memory['time_s']:.2f} s, peak RSS {memory['peak_rss_mb']:.0f} MB")
    fb_mp = 0.05 if args.quick else FOUR_BRUSH_MP
    say(f"four brushes: {fb_mp:g} MP in a fresh process")
    four_brush = run_child({**base, "megapixels": fb_mp, "brushes_mm": list(FOUR_BRUSH_BRUSHES_MM),
                            "mm_per_px": FOUR_BRUSH_MM_PER_PX, "final_png": True})
    say(f"  {four_brush['time_s']:.2f} s, final.png ΔE00 {four_brush['final_png_de']:.3f}")
    results = checks(photos, scaling, memory, four_brush, runs_cmp)
    total = time.perf_counter() - t_start
    info["palette"] = ("k-means as is (--free-palette)" if args.free_palette
                       else "the product's default: k-means snapped to mixable recipes")
    md, summary = render_md(info, photos, scaling, memory, four_brush, results, args.quick, total, runs_cmp)
    tmp = out_path.parent / f"results-{os.getpid()}.tmp"  # ignored by .gitignore
    tmp.write_text(md, encoding="utf-8")
    tmp.replace(out_path)
    (out_path.with_suffix(".json")).write_text(json.dumps(
        {"machine": info, "photos": photos, "scaling": scaling, "memory": memory, "four_brush": four_brush,
         "runs": runs_cmp, "runs_summary": runs_summary(runs_cmp),
         "checks": [{"target": n, "pass": ok, "detail": d} for n, ok, d in results], "quick": args.quick,
         "total_s": total}, indent=1), encoding="utf-8")
    print()
    for name, ok, detail in results:
        print(f"{'PASS' if ok else 'FAIL'}  {name}: {detail}")
    print()
    print(summary)
    print(f"\nwritten {out_path} in {total / 60:.1f} min")
    return 0


if __name__ == "__main__":
    sys.exit(main())
