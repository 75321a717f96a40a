"""plan.pdf: the printed plan (plan.html) laid out on pages, for printing without a browser.

The PDF is made from the very HTML the plan.html export writes (the templates in
``templates/sheets/`` with ``static/sheet.css`` inlined), so the two cannot disagree.
WeasyPrint lays it out with the print style sheet: one ``.sheet`` section per page
(``break-after: page``), A4 pages unless the style sheet's ``@page`` names a size, 12 mm
margins.

WeasyPrint draws text with Pango, a system library: on Debian or Ubuntu,
``apt-get install libpango-1.0-0 libpangoft2-1.0-0 libharfbuzz-subset0`` (and a font
package such as ``fonts-liberation``). Without it :func:`unavailable` says why, and the
export leaves plan.pdf out rather than losing the rest of the plan.

References
----------
.. [1] W3C, CSS Paged Media Module Level 3 (``@page``, default page size) and CSS
   Fragmentation Module Level 3 (``break-after: page``).
.. [2] ISO 216:2007, A4 = 210 × 297 mm.
.. [3] ISO 32000-1:2008, Document management - Portable document format - Part 1: PDF 1.7.
"""

from __future__ import annotations

from contextlib import contextmanager
from functools import lru_cache

#: the only kind of URL the printed plan holds (pictures are data URIs); anything else is refused,
#: so rendering never reads a local file or the network, whatever text ends up in a plan
_ALLOWED_SCHEMES = ("data",)
#: what a fresh Debian/Ubuntu machine needs for WeasyPrint (its install notes)
SYSTEM_PACKAGES = ("libpango-1.0-0", "libpangoft2-1.0-0", "libharfbuzz-subset0")


@contextmanager
def _pillow_untouched():
    """Keep Pillow's process-wide ``LOAD_TRUNCATED_IMAGES`` as it was.

    WeasyPrint sets it to True when its image module is imported, which would make every
    later photo load in the process (layerplan.load, the web app's workers) accept cut-short
    files. The printed plan's pictures are whole PNGs of our own, so WeasyPrint needs no leniency.
    """
    from PIL import ImageFile

    before = ImageFile.LOAD_TRUNCATED_IMAGES
    try:
        yield
    finally:
        ImageFile.LOAD_TRUNCATED_IMAGES = before


@lru_cache(maxsize=1)
def unavailable() -> str | None:
    """Why plan.pdf cannot be made on this machine, or None when it can.

    WeasyPrint loads Pango when it is imported; a missing library is an ``OSError`` there.
    """
    try:
        with _pillow_untouched():
            import weasyprint  # noqa: F401
            import weasyprint.images  # noqa: F401  (the module that changes Pillow's setting)
    except ImportError:
        return "WeasyPrint is not installed (pip install weasyprint)"
    except OSError as exc:
        return (f"WeasyPrint cannot load Pango ({exc}); on Debian or Ubuntu: "
                f"apt-get install {' '.join(SYSTEM_PACKAGES)}")
    return None


def plan_pdf(html: str) -> bytes:
    """Lay out the printed plan's HTML on pages as a PDF.

    Parameters
    ----------
    html : str
        A self-contained plan.html (:func:`layerplan.report.plan_html`): CSS inline,
        pictures as data URIs.

    Returns
    -------
    pdf : bytes
        One page per ``.sheet`` section that fits a page (a longer one continues on the
        next). The same HTML gives the same bytes.

    Raises
    ------
    RuntimeError
        If WeasyPrint or Pango is missing (the message says what to install).

    References
    ----------
    W3C CSS Paged Media Level 3; ISO 216 (A4); ISO 32000-1 (PDF).
    """
    reason = unavailable()
    if reason is not None:
        raise RuntimeError(f"cannot write plan.pdf: {reason}")
    from weasyprint import HTML
    from weasyprint.urls import URLFetcher

    fetcher = URLFetcher(allowed_protocols=_ALLOWED_SCHEMES)
    with _pillow_untouched():
        return HTML(string=html, base_url=None, url_fetcher=fetcher, media_type="print").write_pdf()
