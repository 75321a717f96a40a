"""Start-up and first run: ``python -m bench.startup [--fresh]``.

Each figure comes from a fresh interpreter, as a painter's command gets one:

- **CLI plan**: ``python -m layerplan plan`` of a 640 px photo (scikit-image's ``coffee``
  scaled to 640 px wide, written as PNG) at the bench settings (8 paints, brushes
  100/50/25 mm, 5 mm per pixel), with and without ``--free-palette``; the whole command's
  wall time, and which heavy libraries it loaded (scikit-learn, numba).
- **split**: in one fresh process, the imports the plan command makes (seconds), the loading
  of numba's compiled code (a tiny plan and export, :func:`layerplan.warm.warm_up`), then the
  640 px plan itself, so start-up and planning are measured in the same run.
- **fresh install** (``--fresh``): numba's cache pointed at an empty folder, as right after
  installing; ``layerplan warm`` (the README's first command, which compiles everything once)
  is timed, then the same split twice: the first plan after the install and the next one.

References
----------
Numba's on-disk cache: ``cache=True`` and ``NUMBA_CACHE_DIR`` (numba documentation,
"Cache" and "Environment variables").
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
HEAVY = ("sklearn", "numba", "layerplan._palette_kernels", "layerplan._placer_kernels")
WIDTH_PX = 640
MM_PER_PX = 5.0

_SPLIT = r"""
import json, sys, time
t0 = time.perf_counter()
from layerplan import cli, export, load, pipeline, settings  # what `layerplan plan` imports
t_import = time.perf_counter() - t0
import numpy as np
from PIL import Image
from layerplan.warm import warm_up
t1 = time.perf_counter(); warm_up(); t_load = time.perf_counter() - t1
img = np.asarray(Image.open(sys.argv[1]).convert("RGB"))
h, w = img.shape[:2]
s = settings.Settings(wall_width_mm=w * 5.0, wall_height_mm=h * 5.0, paints=8, brushes_mm=(100.0, 50.0, 25.0),
                      mm_per_px=5.0, free_palette=sys.argv[2] == "1")
t2 = time.perf_counter(); plan = pipeline.make_plan(img, s); t_plan = time.perf_counter() - t2
from layerplan import colour
target_lab = colour.srgb_to_lab(img)
units = []
for _ in range(3):
    t3 = time.perf_counter(); colour.error_planes(target_lab, plan.palette_lab()); units.append(time.perf_counter() - t3)
print(json.dumps({"import_s": t_import, "load_s": t_load, "plan_s": t_plan, "unit_s": sorted(units)[1]}))
"""

_CLI = r"""
import contextlib, io, json, sys, time
t0 = time.perf_counter()
from layerplan.cli import main
status = main(json.loads(sys.argv[1]))
t = time.perf_counter() - t0
print(json.dumps({"status": status, "in_process_s": t,
                  "loaded": sorted(m for m in json.loads(sys.argv[2]) if m in sys.modules)}))
"""


def photo_png(folder: Path) -> Path:
    """coffee scaled to 640 px wide, as a PNG a painter would give the CLI."""
    from PIL import Image
    from skimage import data

    img = Image.fromarray(data.coffee())
    h = round(img.height * WIDTH_PX / img.width)
    path = folder / "coffee-640.png"
    img.resize((WIDTH_PX, h), Image.Resampling.LANCZOS).save(path)
    return path


def _python(code: str, *args: str, env=None) -> tuple[dict, float]:
    t0 = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", code, *args], cwd=HERE.parent, capture_output=True, text=True,
                          env={**os.environ, **(env or {})})
    wall = time.perf_counter() - t0
    if done.returncode != 0:
        raise RuntimeError(done.stderr[-3000:])
    return json.loads(done.stdout.strip().splitlines()[-1]), wall


def cli_plan(png: Path, out: Path, *, free_palette: bool) -> dict:
    """The whole `layerplan plan` command in a fresh interpreter: wall time and heavy modules loaded."""
    from PIL import Image

    w, h = Image.open(png).size
    argv = ["plan", str(png), "--out", str(out), "--quiet", "--wall", f"{w * MM_PER_PX:g}x{h * MM_PER_PX:g}mm",
            "--paints", "8", "--brushes", "100,50,25", "--pixel-mm", f"{MM_PER_PX:g}"]
    if free_palette:
        argv.append("--free-palette")
    res, wall = _python(_CLI, json.dumps(argv), json.dumps(HEAVY))
    res["wall_s"] = wall
    return res


def split(png: Path, *, free_palette: bool, cache_dir: str | None = None) -> dict:
    env = {"NUMBA_CACHE_DIR": cache_dir} if cache_dir else None
    res, wall = _python(_SPLIT, str(png), "1" if free_palette else "0", env=env)
    res["process_s"] = wall
    return res


def measure(fresh: bool = False) -> dict:
    out: dict = {}
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        png = photo_png(tmp)
        split(png, free_palette=False)  # fills the ordinary cache if this checkout's is stale
        for free in (False, True):
            key = "free_palette" if free else "mixable"
            out[f"cli_{key}"] = cli_plan(png, tmp / f"out-{key}", free_palette=free)
            out[f"split_{key}"] = split(png, free_palette=free)
        if fresh:
            cache = tmp / "numba-cache"
            cache.mkdir()
            env = {**os.environ, "NUMBA_CACHE_DIR": str(cache)}
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "layerplan", "warm"], cwd=HERE.parent, env=env, check=True,
                           capture_output=True)
            out["fresh_warm_s"] = time.perf_counter() - t0
            out["fresh_first"] = split(png, free_palette=False, cache_dir=str(cache))
            out["fresh_next"] = split(png, free_palette=False, cache_dir=str(cache))
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="python -m bench.startup", description=__doc__.splitlines()[0])
    ap.add_argument("--fresh", action="store_true", help="also time a first run on an empty numba cache")
    args = ap.parse_args(argv)
    print(json.dumps(measure(args.fresh), indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
