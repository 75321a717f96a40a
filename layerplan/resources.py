"""Where the templates and static files are, installed or in a source checkout.

In the repository they sit at the top level (``templates/``, ``static/``) beside the package; a built wheel
carries them inside it as ``layerplan/templates`` and ``layerplan/static`` (``pyproject.toml`` maps them), so
``pip install .`` serves the same pages as an editable install. Every reader asks here, never builds a path.
"""

from __future__ import annotations

from pathlib import Path

_PACKAGE = Path(__file__).resolve().parent


def _find(name: str) -> Path:
    for candidate in (_PACKAGE / name, _PACKAGE.parent / name):
        if candidate.is_dir():
            return candidate
    raise FileNotFoundError(f"layerplan's {name}/ folder is missing (looked in {_PACKAGE} and its parent); "
                            "reinstall the package")


def template_dir() -> Path:
    """The folder of Jinja2 templates (web pages and printed sheets)."""
    return _find("templates")


def static_dir() -> Path:
    """The folder of CSS, JavaScript and icons served by the web app and inlined into plan.html."""
    return _find("static")
