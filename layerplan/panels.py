"""Panels: the design split into numbered panels or cloth strips, painted in the studio and put up on site.

A panel is a rectangle of the wall (mm, top-left origin) no bigger than the panel size
given; neighbours overlap by the overlap given, so there is a band to glue or trim where
they meet. Panels are numbered row by row from the wall's top-left, as they are hung; the
last ones in a row or column are cut to the wall's edge. Each gets its own sheet and its
place on a key map (:func:`layerplan.sheets.panel_sheets`, ``panels.html``).

Marking each panel with its number and which way is up, and laying them out in rows from a
key map, is common practice for murals painted on cloth and boards off the wall.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: most panels in one plan (a 100 m wall in 1 m strips two high is 200)
MAX_PANELS = 400


@dataclass(frozen=True)
class Panel:
    """One panel: its number (1 = top-left), its row and column (from 1) and its box on the wall, mm."""

    number: int
    row: int
    column: int
    x_mm: float
    y_mm: float
    width_mm: float
    height_mm: float

    @property
    def box(self) -> tuple[float, float, float, float]:
        """``(x0, y0, x1, y1)`` in wall mm."""
        return self.x_mm, self.y_mm, self.x_mm + self.width_mm, self.y_mm + self.height_mm


def _starts(side_mm: float, size_mm: float, overlap_mm: float) -> list[tuple[float, float]]:
    """(start, length) of the panels along one side: steps of size − overlap, the last cut to the edge."""
    if side_mm <= size_mm + 1e-9:
        return [(0.0, side_mm)]
    step = size_mm - overlap_mm
    n = math.ceil((side_mm - overlap_mm) / step - 1e-9)
    return [(i * step, min(size_mm, side_mm - i * step)) for i in range(n)]


def panel_layout(wall_mm: tuple[float, float], size_mm: tuple[float, float], overlap_mm: float) -> tuple[Panel, ...]:
    """Panels covering the wall, each at most ``size_mm``, neighbours overlapping by ``overlap_mm``.

    Parameters
    ----------
    wall_mm : (width, height)
    size_mm : (width, height) of one panel or cloth strip
    overlap_mm : float
        Overlap between neighbouring panels, >= 0 and less than either panel side.

    Returns
    -------
    tuple of Panel, row by row from the top-left

    Raises
    ------
    ValueError
        A size not > 0, an overlap not below the panel's sides, or more than :data:`MAX_PANELS` panels.
    """
    (wall_w, wall_h), (pw, ph) = wall_mm, size_mm
    if not (pw > 0 and ph > 0 and math.isfinite(pw) and math.isfinite(ph)):
        raise ValueError(f"panel size must be > 0, got {pw:g} x {ph:g} mm")
    if not (0 <= overlap_mm < min(pw, ph)):
        raise ValueError(f"panel overlap must be at least 0 and less than the panel's sides ({min(pw, ph):g} mm), "
                         f"got {overlap_mm:g} mm")
    cols, rows = _starts(wall_w, pw, overlap_mm), _starts(wall_h, ph, overlap_mm)
    if len(cols) * len(rows) > MAX_PANELS:
        raise ValueError(f"{pw / 1000:g} x {ph / 1000:g} m panels give {len(cols) * len(rows)} panels on this wall "
                         f"(at most {MAX_PANELS}); use bigger panels")
    out, n = [], 0
    for r, (y, h) in enumerate(rows, start=1):
        for c, (x, w) in enumerate(cols, start=1):
            n += 1
            out.append(Panel(n, r, c, x, y, w, h))
    return tuple(out)


def overlaps_of(panel: Panel, panels) -> list[tuple[int, tuple[float, float, float, float]]]:
    """The bands ``panel`` shares with each neighbour: ``[(neighbour number, (x0, y0, x1, y1)), ...]``."""
    a = panel.box
    out = []
    for other in panels:
        if other.number == panel.number:
            continue
        b = other.box
        box = (max(a[0], b[0]), max(a[1], b[1]), min(a[2], b[2]), min(a[3], b[3]))
        if box[2] > box[0] + 1e-9 and box[3] > box[1] + 1e-9:
            out.append((other.number, box))
    return out


def panels_html(doc) -> str:
    """Lay out a :class:`layerplan.sheets.PanelDoc` as one self-contained HTML document (``panels.html``)."""
    from markupsafe import Markup

    from .report import STYLESHEET, environment
    from .resources import static_dir

    css = (static_dir() / STYLESHEET).read_text(encoding="utf-8")
    return environment().get_template("sheets/panels.html").render(sheets=doc, css=Markup(css))
