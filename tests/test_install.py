"""The built wheel works on its own: build it, install it in a fresh venv, run the CLI and the web app from there.

An editable install reads templates, static files and package data from the source tree, so it cannot show a
file missing from the wheel; this test runs only what ``pip install layerplan-*.whl`` puts in a venv, from a
folder outside the repository.

The build uses the setuptools already installed (``--no-build-isolation``, no download). When that setuptools
is older than ``[build-system] requires`` in pyproject.toml the test is skipped, unless LAYERPLAN_REQUIRE_BUILD=1
(set by ``.ci/run``, which installs the pinned setuptools first).
"""

import os
import re
import shutil
import signal
import socket
import subprocess
import sys
import time
import tomllib
import urllib.error
import urllib.request
from importlib import metadata
from pathlib import Path

import pytest
from packaging.requirements import Requirement

REPO = Path(__file__).resolve().parents[1]
#: how long the server may take to answer its first request (imports numpy, Flask, the job store)
START_TIMEOUT_S = 60.0

pytestmark = pytest.mark.slow


def _require_build_backend():
    """Skip (or in CI fail) when the installed build backend cannot build this pyproject."""
    wanted = tomllib.loads((REPO / "pyproject.toml").read_text("utf-8"))["build-system"]["requires"]
    problems = []
    for text in wanted:
        req = Requirement(text)
        try:
            have = metadata.version(req.name)
        except metadata.PackageNotFoundError:
            problems.append(f"{req.name} is not installed")
            continue
        if not req.specifier.contains(have, prereleases=True):
            problems.append(f"{req.name} {have} does not satisfy {text!r}")
    if problems:
        message = "cannot build the wheel offline: " + "; ".join(problems) + " (pip install -c constraints.txt setuptools)"
        if os.environ.get("LAYERPLAN_REQUIRE_BUILD") == "1":
            pytest.fail(message)
        pytest.skip(message)


def _source_copy(dest: Path) -> Path:
    """The checkout's files as git sees them (tracked and new, not ignored), so the build's scratch stays outside."""
    listed = subprocess.run(
        ["git", "ls-files", "-z", "--cached", "--others", "--exclude-standard"],
        cwd=REPO, capture_output=True, check=True,
    ).stdout.decode("utf-8").split("\0")
    for rel in filter(None, listed):
        src = REPO / rel
        if src.is_file():  # a tracked file deleted in the work tree is listed too
            (dest / rel).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dest / rel)
    return dest


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _get(url: str):
    """(status, content type, body) of a GET; an HTTP error status is returned, not raised."""
    try:
        resp = urllib.request.urlopen(url, timeout=10)
    except urllib.error.HTTPError as exc:
        resp = exc
    with resp:
        return resp.status, resp.headers.get("Content-Type", ""), resp.read().decode("utf-8", "replace")


def _clean_env() -> dict:
    """This environment without what would point Python or layerplan elsewhere."""
    return {k: v for k, v in os.environ.items() if not k.startswith(("PYTHON", "LAYERPLAN_", "VIRTUAL_ENV"))}


def test_wheel_installs_and_serves_the_start_page(tmp_path):
    _require_build_backend()
    had_build_dir = (REPO / "build").exists()
    src = _source_copy(tmp_path / "src")
    wheels = tmp_path / "wheels"
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index",
                    "-q", "-w", str(wheels), str(src)], check=True, timeout=300)
    assert (REPO / "build").exists() == had_build_dir  # the build ran in the copy, not in the checkout
    (wheel,) = wheels.glob("layerplan-*.whl")

    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--system-site-packages", str(venv)], check=True, timeout=120)
    bin_dir = venv / "bin"
    # --ignore-installed: the machine's own layerplan (an editable install, seen through the system site-packages)
    # must not count as this wheel being installed already
    subprocess.run([str(bin_dir / "pip"), "install", "-q", "--no-deps", "--no-index", "--ignore-installed", str(wheel)],
                   check=True, timeout=300)

    run_dir = tmp_path / "elsewhere"  # outside the repository, so its source cannot be imported by accident
    run_dir.mkdir()
    env = _clean_env()
    probe = ("import layerplan, layerplan.mixing as m; from layerplan import resources as r; "
             "print(layerplan.__file__); print(r.template_dir()); print(r.static_dir()); "
             "print(m.mix_colours([[255, 255, 255]], [1])[1].tolist())")
    done = subprocess.run([str(bin_dir / "python"), "-c", probe], cwd=run_dir, env=env, capture_output=True,
                          text=True, timeout=120, check=True)
    package, templates, static, white = done.stdout.splitlines()
    site = venv.resolve()
    for path in (package, templates, static):  # the wheel's copies, not the checkout's nor /work/main's
        assert Path(path).resolve().is_relative_to(site), path
    assert white == "[255, 255, 255]"  # the packaged spectral tables load: white mixed alone stays white

    helped = subprocess.run([str(bin_dir / "layerplan"), "--help"], cwd=run_dir, env=env, capture_output=True,
                            text=True, timeout=120)
    assert helped.returncode == 0, helped.stderr
    assert all(cmd in helped.stdout for cmd in ("plan", "serve", "paints", "mix"))

    # a small plan from the installed wheel: the printed plan's sheet templates and its style sheet ship too
    # (templates/sheets/ is a sub-folder, which a package-data pattern can miss)
    planned = subprocess.run([str(bin_dir / "layerplan"), "plan", str(REPO / "sample_images" / "community-wall.png"),
                              "--out", str(tmp_path / "plan"), "--wall", "1x0.5m", "--pixel-mm", "25",
                              "--brushes", "100,50", "--quiet"],
                             cwd=run_dir, env=env, capture_output=True, text=True, timeout=600)
    assert planned.returncode == 0, planned.stderr
    printed = (tmp_path / "plan" / "plan.html").read_text("utf-8")
    css = (REPO / "static" / "sheet.css").read_text("utf-8")
    assert 'id="safety"' in printed and css.strip()[:200] in printed  # every sheet, the CSS inlined

    port = _free_port()
    log_path = tmp_path / "serve.log"
    log = log_path.open("w")
    server = subprocess.Popen(
        [str(bin_dir / "layerplan"), "serve", "--port", str(port), "--data-dir", str(tmp_path / "data")],
        cwd=run_dir, env=env, stdout=log, stderr=subprocess.STDOUT,
        start_new_session=True,  # its own process group: the planning fork server goes with it at the end
    )
    try:
        base = f"http://127.0.0.1:{port}"
        deadline = time.monotonic() + START_TIMEOUT_S
        while True:
            assert server.poll() is None, f"layerplan serve exited: {log_path.read_text()}"
            try:
                status, ctype, page = _get(base + "/")
                break
            except (urllib.error.URLError, ConnectionError):
                assert time.monotonic() < deadline, f"no answer on port {port} within {START_TIMEOUT_S:g} s"
                time.sleep(0.3)
        assert (status, ctype.split(";")[0]) == (200, "text/html"), page[:500]
        sheet = re.search(r'<link rel="stylesheet" href="(/static/([^"?]+)[^"]*)"', page)
        assert sheet, "the start page links no stylesheet under /static/"
        status, ctype, css = _get(base + sheet.group(1))
        assert (status, ctype.split(";")[0]) == (200, "text/css"), f"{sheet.group(1)}: {status}"
        assert css == (REPO / "static" / sheet.group(2)).read_text("utf-8")  # the repository's own sheet
    finally:
        server.send_signal(signal.SIGTERM)  # stops cleanly, as a service manager would
        try:
            server.wait(timeout=30)
        except subprocess.TimeoutExpired:
            pass
        try:  # the fork server may still be loading the planner's compiled code: end it too
            os.killpg(server.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        server.wait(timeout=30)
        log.close()
    assert server.returncode == 0, log_path.read_text()
