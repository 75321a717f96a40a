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
