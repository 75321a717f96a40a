"""What the light commands import: `layerplan paints` and `layerplan mix` load only what they use.

Each command runs in a fresh interpreter (a test process has imported everything already) and
reports which of the heavy libraries and layerplan modules ended up in ``sys.modules``.
"""

import json
import subprocess
import sys
from pathlib import Path

import pytest


REPO = Path(__file__).resolve().parents[1]

#: top-level modules none of the light commands uses: the compiler, the clustering, the web app and
#: its server, colour-science (a test reference only since its tables became package data), the
#: stroke planner
HEAVY = {"numba", "llvmlite", "sklearn", "flask", "werkzeug", "waitress", "colour", "layerplan.placer",
         "layerplan.pipeline", "layerplan.web"}

_PROBE = """
import contextlib, io, json, sys
from layerplan.cli import main  # the real entry point, parser and all
out = io.StringIO()
with contextlib.redirect_stdout(out):
    status = main(json.loads(sys.argv[1]))
import layerplan
heavy = json.loads(sys.argv[2])
print(json.dumps({
    "status": status,
    "stdout": out.getvalue(),
    "package": layerplan.__file__,
    "loaded": sorted(m for m in heavy if m in sys.modules),
}))
"""


def _run(argv):
    done = subprocess.run(
        [sys.executable, "-c", _PROBE, json.dumps(argv), json.dumps(sorted(HEAVY))],
        cwd=REPO, capture_output=True, text=True, timeout=120,
    )
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout.splitlines()[-1])
    # the probe must have run this checkout's layerplan, not another install
    assert Path(result["package"]).resolve().parent == REPO / "layerplan"
    assert result["status"] == 0
    return result


@pytest.mark.parametrize("argv", [["paints"], ["paints", "--json"]])
def test_paints_loads_no_compiler_clustering_web_or_colour_science(argv):
    result = _run(argv)
    assert result["loaded"] == []
    assert "White" in result["stdout"]  # the command did its job: the default set lists its white


def test_mix_loads_no_clustering_web_colour_science_or_planner():
    result = _run(["mix", "#6b8e23", "--json"])
    # the recipe search is numpy: no compiled code to load
    assert result["loaded"] == []
    assert [r["target"] for r in json.loads(result["stdout"])] == ["#6b8e23"]


def test_mix_combine_loads_no_clustering_web_colour_science_or_planner():
    result = _run(["mix", "--combine", "White=3", "Warm red=1", "--json"])
    assert result["loaded"] == []
    assert set(json.loads(result["stdout"])) == {"predicted_srgb", "lab"}


def _tiny_photo(tmp_path):
    import numpy as np
    from PIL import Image

    rng = np.random.default_rng(0)
    img = (rng.random((24, 36, 3)) * 255).astype(np.uint8)
    img[:12] = (200, 40, 40)
    path = tmp_path / "tiny.png"
    Image.fromarray(img).save(path)
    return path


@pytest.mark.parametrize("free", [False, True])
def test_plan_loads_scikit_learn_only_for_kmeans_and_the_palette_search_only_without_it(tmp_path, free):
    argv = ["plan", str(_tiny_photo(tmp_path)), "--out", str(tmp_path / "out"), "--quiet", "--wall", "36x24cm",
            "--paints", "3", "--brushes", "60,20", "--pixel-mm", "10"] + (["--free-palette"] if free else [])
    probe = _PROBE  # the same probe, asked about the clustering and the palette search's kernels
    done = subprocess.run([sys.executable, "-c", probe, json.dumps(argv),
                           json.dumps(["sklearn", "layerplan._palette_kernels"])],
                          cwd=REPO, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    result = json.loads(done.stdout.splitlines()[-1])
    assert result["status"] == 0 and (tmp_path / "out" / "plan.json").exists()
    # k-means (scikit-learn) runs only for the free palette; the search among mixes only without it
    assert result["loaded"] == (["sklearn"] if free else ["layerplan._palette_kernels"])
