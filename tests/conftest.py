"""Shared fixtures. Sections below are owned by the test modules that use them."""

from __future__ import annotations

import numpy as np
import pytest

# ---------------------------------------------------------------- synthetic images

QUADRANT_COLOURS = np.array(
    [[200, 40, 40], [40, 160, 60], [40, 70, 200], [240, 220, 90]], dtype=np.uint8
)


def quadrants(h: int = 60, w: int = 80) -> np.ndarray:
    """Four flat quadrants in four colours: a plan should reproduce it almost exactly."""
    img = np.empty((h, w, 3), dtype=np.uint8)
    img[: h // 2, : w // 2] = QUADRANT_COLOURS[0]
    img[: h // 2, w // 2 :] = QUADRANT_COLOURS[1]
    img[h // 2 :, : w // 2] = QUADRANT_COLOURS[2]
    img[h // 2 :, w // 2 :] = QUADRANT_COLOURS[3]
    return img


@pytest.fixture
def quadrant_image():
    return quadrants()


# ---------------------------------------------------------------- web app (tests/test_web_*.py)
# Fixtures for the Flask app, its test client and a live server on 127.0.0.1. Plans made here
# are kept tiny (a 0.8 × 0.6 m surface, two brushes, 10 mm pixels) so each takes a second or two.

import io as _io
import threading as _threading
import time as _time
from pathlib import Path as _Path

REPO_ROOT = _Path(__file__).resolve().parents[1]

#: form fields of a plan that is quick to make
TINY_PLAN = {"wall_width": "0.8", "wall_height": "0.6", "unit": "m", "paints": "4", "brushes": "40,20",
             "pixel_mm": "10", "seed": "1"}


def png_bytes(image: np.ndarray) -> bytes:
    """Encode an (H, W, 3) uint8 array as PNG."""
    from PIL import Image

    buf = _io.BytesIO()
    Image.fromarray(image).save(buf, format="PNG")
    return buf.getvalue()


def plan_form(image: bytes | None = None, name: str = "quadrants.png", **fields) -> dict:
    """Multipart data for POST /api/plans: TINY_PLAN with ``fields`` replacing its values."""
    data = {**TINY_PLAN, **fields}
    data = {k: v for k, v in data.items() if v is not None}
    if image is None:
        image = png_bytes(quadrants())
    data["image"] = (_io.BytesIO(image), name)
    return data


def wait_for_plan(client, plan_id: str, *, timeout: float = 90.0, states=("done", "failed")) -> list[dict]:
    """Poll GET /api/plans/<id> until its state is in ``states``; return every status seen."""
    seen = []
    end = _time.monotonic() + timeout
    while _time.monotonic() < end:
        r = client.get(f"/api/plans/{plan_id}")
        assert r.status_code == 200, r.get_data(as_text=True)
        seen.append(r.get_json())
        if seen[-1]["state"] in states:
            return seen
        _time.sleep(0.05)
    raise AssertionError(f"plan {plan_id} still {seen[-1]['state']} after {timeout} s: {seen[-1]}")


def make_web_app(data_dir, **config):
    from layerplan.web import create_app

    return create_app({"TESTING": True, "DATA_DIR": str(data_dir), "WORKERS": 2, **config})


@pytest.fixture
def app(tmp_path):
    """The web app on a fresh data directory; its workers are stopped afterwards."""
    application = make_web_app(tmp_path / "data")
    yield application
    application.extensions["layerplan"].close()


@pytest.fixture
def client(app):
    return app.test_client()


class LiveServer:
    """The app served by waitress on 127.0.0.1 in a background thread."""

    def __init__(self, application):
        import waitress

        self.app = application
        self.server = waitress.create_server(application, host="127.0.0.1", port=0, threads=4)
        self.url = f"http://127.0.0.1:{self.server.effective_port}"
        self.thread = _threading.Thread(target=self.server.run, daemon=True)
        self.thread.start()

    def close(self):
        self.server.close()
        self.thread.join(timeout=10)


@pytest.fixture
def live_server(app):
    server = LiveServer(app)
    yield server
    server.close()
