"""The plan on a photo of the site: the picture warped onto the wall as the photo sees it.

For the client and the permit: the painter photographs the wall and marks its four corners
(top-left, top-right, bottom-right, bottom-left, as the wall is painted); the plan's
picture is mapped onto that quadrilateral by the projective transform (homography) the
four pairs of corners fix, and laid over the photo. Openings are transparent in the
plan's pictures (:func:`layerplan.raster.picture`), so the photo's own windows and doors
show through them.

Corners are in the photo's pixel coordinates as a person marks them: x to the right, y
down, from the photo's top-left corner, pixel i spanning [i, i + 1) (a click's offset in
an image shown at its own size). The picture's corners are the outer corners of its
corner pixels, so the wall's edge lands on the marked points.

References
----------
.. [1] R. Hartley, A. Zisserman, Multiple View Geometry in Computer Vision, 2nd ed.,
   Cambridge University Press, 2004, §4.1 (the homography from four point pairs, DLT).
.. [2] S. van der Walt et al., "scikit-image: image processing in Python", PeerJ 2:e453,
   2014 (``skimage.transform.ProjectiveTransform`` and ``warp``).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

#: most pixels of a site photo we warp into (about a 24-megapixel camera's frame)
MAX_SITE_PIXELS = 25_000_000


def check_corners(corners, photo_shape) -> np.ndarray:
    """The four marked corners as a (4, 2) float array, checked against the photo.

    Raises
    ------
    ValueError
        Not four (x, y) pairs of finite numbers, a corner outside the photo, or corners that
        do not make a convex quadrilateral in the order top-left, top-right, bottom-right,
        bottom-left (crossed, or three in a line).
    """
    try:
        pts = np.asarray(corners, dtype=float).reshape(4, 2)
    except (TypeError, ValueError):
        raise ValueError(f"corners must be four x,y points (8 numbers), got {corners!r}") from None
    if not np.isfinite(pts).all():
        raise ValueError(f"corners must be finite numbers, got {pts.tolist()}")
    h, w = photo_shape[:2]
    for n, (x, y) in enumerate(pts, start=1):
        if not (0 <= x <= w and 0 <= y <= h):
            raise ValueError(f"corner {n} ({x:g}, {y:g}) is outside the {w} x {h} px site photo")
    # convex and in order: every turn the same way, and clockwise on screen (y down)
    edges = np.roll(pts, -1, axis=0) - pts
    nxt = np.roll(edges, -1, axis=0)
    turns = edges[:, 0] * nxt[:, 1] - edges[:, 1] * nxt[:, 0]
    if not all(t > 0 for t in turns):
        raise ValueError("corners must be the wall's top-left, top-right, bottom-right and bottom-left, in that "
                         f"order, making a convex shape; got {pts.tolist()}")
    return pts


def wall_transform(picture_shape, corners):
    """The projective transform taking picture pixel coordinates to site-photo ones.

    Both in scikit-image's convention (pixel centres at whole numbers): the picture's outer
    corners ``(-0.5, -0.5)`` … go to the marked corners, less half a pixel.

    Returns
    -------
    skimage.transform.ProjectiveTransform

    References
    ----------
    Hartley & Zisserman (2004), §4.1.
    """
    from skimage.transform import ProjectiveTransform

    h, w = picture_shape[:2]
    src = np.array([[-0.5, -0.5], [w - 0.5, -0.5], [w - 0.5, h - 0.5], [-0.5, h - 0.5]])
    tform = ProjectiveTransform.from_estimate(src, np.asarray(corners, dtype=float) - 0.5)
    if not tform:
        raise ValueError("the corners give no projective transform (three of them in a line?)")
    return tform


def mockup(picture: np.ndarray, site: np.ndarray, corners: Sequence) -> np.ndarray:
    """The picture laid over the site photo inside the marked corners.

    Parameters
    ----------
    picture : (h, w, 3) or (h, w, 4) uint8 array
        The plan's picture (alpha 0 where nothing is painted: openings).
    site : (H, W, 3) uint8 array
        The photo of the wall.
    corners : (4, 2) array-like
        The wall's top-left, top-right, bottom-right and bottom-left in the photo (see the
        module's notes on coordinates).

    Returns
    -------
    (H, W, 3) uint8 array

    Raises
    ------
    ValueError
        Bad corners (:func:`check_corners`), or a photo over :data:`MAX_SITE_PIXELS`.

    References
    ----------
    Hartley & Zisserman (2004); van der Walt et al. (2014).
    """
    from skimage.transform import warp

    site = np.asarray(site)
    if site.ndim != 3 or site.shape[2] != 3 or site.dtype != np.uint8:
        raise ValueError(f"site photo must be an (H, W, 3) uint8 array, got {site.dtype} {site.shape}")
    if site.shape[0] * site.shape[1] > MAX_SITE_PIXELS:
        raise ValueError(f"site photo of {site.shape[1]} x {site.shape[0]} px is over "
                         f"{MAX_SITE_PIXELS / 1e6:g} megapixels; use a smaller copy")
    pts = check_corners(corners, site.shape)
    pic = np.asarray(picture)
    if pic.shape[2] == 3:
        pic = np.concatenate([pic, np.full(pic.shape[:2] + (1,), 255, np.uint8)], axis=2)
    tform = wall_transform(pic.shape, pts)
    # warp asks, for each photo pixel, where it comes from in the picture: the inverse map. Colours are
    # interpolated (edge pixels repeated, so the wall's edge is not darkened); whether a photo pixel is on
    # the wall at all is its nearest picture pixel's existing (order 0), so the edge is the marked one
    rgba = warp(pic.astype(np.float64) / 255.0, tform.inverse, output_shape=site.shape[:2], order=1,
                mode="edge", preserve_range=True)
    on_wall = warp(np.ones(pic.shape[:2]), tform.inverse, output_shape=site.shape[:2], order=0,
                   mode="constant", cval=0.0, preserve_range=True)
    alpha = (rgba[..., 3] * on_wall)[..., None]
    out = rgba[..., :3] * 255.0 * alpha + site.astype(np.float64) * (1.0 - alpha)
    return np.clip(np.rint(out), 0, 255).astype(np.uint8)
