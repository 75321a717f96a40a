"""The command line against hostile or careless input: huge numbers, hostile inventories and
plan.json files, and output folders that cannot or should not take a plan. Each case exits
non-zero with a message naming what is wrong and its limit, before any planning, and leaves
no file it did not write changed."""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from PIL import Image

from conftest import quadrants
from layerplan.cli import main

ARGS = ["--wall", "80x60cm", "--pixel-mm", "10", "--brushes", "100,50,20", "--paints", "4", "--quiet"]
REPO = Path(__file__).resolve().parents[1]


@pytest.fixture
def photo(tmp_path):
    path = tmp_path / "photos" / "quadrants.png"
    path.parent.mkdir()
    Image.fromarray(quadrants()).save(path)
    return path


@pytest.fixture
def no_planning(monkeypatch):
    import layerplan.pipeline

    def never(*a, **k):
        raise AssertionError("planned although the input was refused")

    monkeypatch.setattr(layerplan.pipeline, "make_plan", never)


def _run(*argv, cwd=REPO, timeout=120):
    """``python -m layerplan`` in a process of its own (a crash would show as a traceback there)."""
    env = dict(os.environ, PYTHONPATH=str(REPO))
    return subprocess.run([sys.executable, "-m", "layerplan", *map(str, argv)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=timeout)


# ------------------------------------------------------------------ huge numbers
@pytest.mark.parametrize("flag,bound", [("--ground-coats", "from 0 to 10"), ("--stroke-coats", "from 1 to 10"),
                                        ("--paints", "from 2 to 32"), ("--stroke-cost", "from 0 to 1000")])
def test_a_huge_number_is_refused_before_planning_naming_the_flag_and_bound(photo, tmp_path, capsys, no_planning,
                                                                          flag, bound):
    for value, said in (("1" + "0" * 400, "a 401-digit number"), (str(10**30), None)):
        out = tmp_path / "never"
        assert main(["plan", str(photo), "--out", str(out), *ARGS, flag, value]) == 2
        err = capsys.readouterr().err
        assert err.startswith(f"layerplan: error: {flag} must be") and bound in err, err
        assert said is None or said in err
        assert len(err) < 200 and not out.exists()


# ------------------------------------------------------------------ hostile inventories
def test_an_inventory_nested_500_deep_is_a_message_not_a_recursion_error(photo, tmp_path):
    deep = tmp_path / "deep.toml"
    deep.write_text('[[paint]]\nname = "White"\nsrgb = "#ffffff"\nnote = ' + "[" * 500 + "]" * 500 + "\n")
    for argv in (["plan", photo, "--out", tmp_path / "never", *ARGS, "--inventory", deep],
                 ["paints", "--inventory", deep]):
        done = _run(*argv)
        assert done.returncode == 2, done.stderr
        assert "arrays or tables nested more than 8 deep" in done.stderr
        assert "Traceback" not in done.stderr and len(done.stderr) < 400
    assert not (tmp_path / "never").exists()


def test_inventory_dev_zero_stops_at_once_with_a_message(photo, tmp_path):
    # it used to read until the process was killed; now a device is refused before reading
    done = _run("plan", photo, "--out", tmp_path / "never", *ARGS, "--inventory", "/dev/zero", timeout=60)
    assert done.returncode == 2
    assert "--inventory: /dev/zero: not a regular file" in done.stderr


def test_sixty_four_paints_mixed_four_at_a_time_in_thirty_parts_is_refused_up_front(photo, tmp_path, capsys,
                                                                                      no_planning):
    kit = tmp_path / "big.toml"
    kit.write_text("".join(f'[[paint]]\nname = "P{i}"\nsrgb = "#{i * 3:02x}8080"\n' for i in range(64)))
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *ARGS, "--inventory", str(kit),
                 "--mix-paints", "4", "--max-parts", "30"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("layerplan: error: 64 paints, up to 4 per mix in up to 30 parts make")
    # the table's size and its limit (layerplan/recipes.py MAX_TABLE_MIXES), and the flag to change
    assert "candidate mixes (at most 1,500,000); lower the --mix-paints or the max parts" in err


def test_twenty_thousand_container_sizes_are_refused_before_planning(photo, tmp_path, capsys, no_planning):
    kit = tmp_path / "tins.toml"
    sizes = ", ".join(f"{0.01 * (k + 1):.2f}" for k in range(20_000))
    kit.write_text(f'[[paint]]\nname = "White"\nsrgb = "#ffffff"\ncontainers_l = [{sizes}]\n')
    assert main(["plan", str(photo), "--out", str(tmp_path / "never"), *ARGS, "--inventory", str(kit)]) == 2
    err = capsys.readouterr().err
    assert "field 'containers_l': at most 8 sizes, got 20,000" in err and len(err) < 300


# ------------------------------------------------------------------ hostile plan.json for render
def _small_plan_json(tmp_path) -> dict:
    from layerplan.plan import Layer, Paint, Plan, Stroke
    import numpy as np

    pal = [Paint("P1", "#f0e0d0", (90.0, 2.0, 5.0)), Paint("P2", "#102030", (12.0, -1.0, -9.0))]
    s = Stroke("P2", 50.0, np.array([[100.0, 200.0], [600.0, 200.0]]))
    return json.loads(Plan(1000.0, 500.0, 100, 50, 10.0, pal, "P1", [Layer(50.0, [s])]).to_json())


@pytest.mark.parametrize("change,message", [
    (lambda d: d["wall"].update(width_mm=-1000.0), "wall.width_mm must be > 0 and at most 100 m, got -1000.0"),
    (lambda d: d["raster"].update(width_px=30_000, height_px=30_000), "raster of 30000x30000 px"),
    (lambda d: d["raster"].update(mm_per_px=0), "raster.mm_per_px must be a number > 0, got 0.0"),
])
def test_render_refuses_a_hostile_plan_json_at_once(tmp_path, change, message):
    doc = _small_plan_json(tmp_path)
    change(doc)
    src = tmp_path / "plan.json"
    src.write_text(json.dumps(doc))
    done = _run("render", src, "--out", tmp_path / "out", timeout=60)  # used to loop, run out of memory or crash
    assert done.returncode == 2, done.stderr
    assert message in done.stderr and "Traceback" not in done.stderr
    assert not (tmp_path / "out").exists()


def test_render_of_a_good_small_plan_still_works(tmp_path):
    src = tmp_path / "plan.json"
    src.write_text(json.dumps(_small_plan_json(tmp_path)))
    assert main(["render", str(src), "--out", str(tmp_path / "out")]) == 0
    assert (tmp_path / "out" / "plan.json").is_file()


def test_render_refuses_a_device_as_plan_json(tmp_path, capsys):
    assert main(["render", "/dev/zero", "--out", str(tmp_path / "out")]) == 2
    assert "/dev/zero is not a file" in capsys.readouterr().err


# ------------------------------------------------------------------ the output folder
def test_out_dot_in_the_photos_folder_with_other_files_is_refused_with_a_message(photo, capsys, no_planning,
                                                                                   monkeypatch):
    (photo.parent / "holiday.jpg").write_bytes(b"not ours")
    monkeypatch.chdir(photo.parent)
    assert main(["plan", photo.name, "--out", ".", *ARGS]) == 2
    err = capsys.readouterr().err
    assert "has an empty name" not in err
    assert f"--out: output folder {photo.parent} is the photo's own folder and holds other files (holiday.jpg)" in err
    assert sorted(p.name for p in photo.parent.iterdir()) == ["holiday.jpg", "quadrants.png"]


def test_out_dot_in_a_photos_folder_of_its_own_writes_the_plan_beside_it(photo, monkeypatch):
    monkeypatch.chdir(photo.parent)
    before = photo.read_bytes()
    assert main(["plan", photo.name, "--out", ".", *ARGS]) == 0
    assert (photo.parent / "plan.json").is_file() and photo.read_bytes() == before
    assert not [p for p in photo.parent.iterdir() if p.name.startswith(".")]  # no partial folder left
    assert main(["plan", photo.name, "--out", ".", *ARGS]) == 0  # and again: it is a plan folder now
    assert photo.read_bytes() == before


def test_a_folder_with_other_files_and_no_plan_is_refused_before_planning(photo, tmp_path, capsys, no_planning):
    out = tmp_path / "mywork"
    out.mkdir()
    (out / "notes.txt").write_text("keep me")
    (out / "sketches").mkdir()
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 2
    assert "holds no plan (notes.txt, sketches/); refusing to overwrite it" in capsys.readouterr().err
    assert (out / "notes.txt").read_text() == "keep me"


def test_replanning_keeps_files_the_plan_did_not_write(photo, tmp_path):
    out = tmp_path / "plan"
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 0
    (out / "notes.txt").write_text("ladder booked for Tuesday")
    (out / "steps" / "my-sketch.png").write_bytes(b"mine")
    (out / "steps" / "99.png").write_bytes(b"an earlier plan's step")
    assert main(["plan", str(photo), "--out", str(out), *ARGS, "--seed", "3"]) == 0
    assert (out / "notes.txt").read_text() == "ladder booked for Tuesday"
    assert (out / "steps" / "my-sketch.png").read_bytes() == b"mine"
    assert not (out / "steps" / "99.png").exists()  # a plan's own file, of the plan replaced
    assert json.loads((out / "plan.json").read_text())["settings"]["seed"] == 3


def test_an_out_that_is_a_file_or_cannot_be_written_is_refused_before_planning(photo, tmp_path, capsys,
                                                                                no_planning, monkeypatch):
    afile = tmp_path / "taken"
    afile.write_text("x")
    assert main(["plan", str(photo), "--out", str(afile), *ARGS]) == 2
    assert f"--out: output {afile} exists and is not a folder" in capsys.readouterr().err
    under = afile / "plan"
    assert main(["plan", str(photo), "--out", str(under), *ARGS]) == 2
    assert f"cannot make {under}: {afile} is a file" in capsys.readouterr().err

    # a read-only file system (EROFS) refuses the probe folder as it would refuse the plan
    import errno
    import tempfile

    real = tempfile.mkdtemp

    def read_only(*a, dir=None, **k):
        if dir is not None and Path(dir) == tmp_path:
            raise OSError(errno.EROFS, "Read-only file system")
        return real(*a, dir=dir, **k)

    monkeypatch.setattr(tempfile, "mkdtemp", read_only)
    assert main(["plan", str(photo), "--out", str(tmp_path / "new"), *ARGS]) == 2
    assert f"--out: cannot write into {tmp_path}: Read-only file system" in capsys.readouterr().err


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_a_read_only_folder_is_refused_before_planning(photo, tmp_path, capsys, no_planning):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        assert main(["plan", str(photo), "--out", str(ro / "plan"), *ARGS]) == 2
        assert "Permission denied" in capsys.readouterr().err
    finally:
        ro.chmod(0o755)


def test_partial_folders_of_a_run_killed_while_writing_are_removed_by_the_next_run(photo, tmp_path):
    out = tmp_path / "plan"
    # the process kills itself with SIGKILL after writing the first file of the plan: a kill -9 mid-write
    code = (
        "import os, signal, sys\n"
        "import layerplan.export as e\n"
        "real = e._write_files\n"
        "def dying(tmp, files):\n"
        "    first = sorted(files)[0]\n"
        "    real(tmp, {first: files[first]})\n"
        "    os.kill(os.getpid(), signal.SIGKILL)\n"
        "e._write_files = dying\n"
        "from layerplan.cli import main\n"
        f"sys.exit(main(['plan', {str(photo)!r}, '--out', {str(out)!r}, *{ARGS!r}]))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], cwd=REPO, env=dict(os.environ, PYTHONPATH=str(REPO)),
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == -signal.SIGKILL
    left = list(tmp_path.glob(".plan.partial-*"))
    assert len(left) == 1 and not out.exists()
    # an older version's partial folder (no process id) abandoned hours ago, and a folder of the
    # same shape holding someone's own file, which is left alone
    legacy = tmp_path / ".plan.partial-k2j3h4"
    (legacy / "steps").mkdir(parents=True)
    (legacy / "steps" / "00.png").write_bytes(b"old")
    os.utime(legacy, (0, 0))
    foreign = tmp_path / ".plan.partial-1-zzz"  # pid 1 is alive anyway; and it holds a file we did not write
    foreign.mkdir()
    (foreign / "diary.txt").write_text("mine")
    assert main(["plan", str(photo), "--out", str(out), *ARGS]) == 0
    assert not left[0].exists() and not legacy.exists()
    assert (foreign / "diary.txt").read_text() == "mine"
    assert (out / "plan.json").is_file()
