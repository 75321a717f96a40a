"""Regenerate the sample images (all made by this script or taken from scikit-image's
public-domain data). Run: python sample_images/make_samples.py"""

from pathlib import Path

import numpy as np
from PIL import Image, ImageDraw
from skimage import data

HERE = Path(__file__).parent


def community_wall(width=900, height=450, seed=7) -> Image.Image:
    """An invented design for a community-centre wall: sky, sun, hills, a river, houses."""
    rng = np.random.default_rng(seed)
    img = Image.new("RGB", (width, height), (120, 178, 222))
    d = ImageDraw.Draw(img)
    for y in range(height // 2):  # sky gets lighter toward the horizon
        t = y / (height / 2)
        d.line([(0, y), (width, y)], fill=(int(95 + 100 * t), int(160 + 60 * t), int(215 + 25 * t)))
    d.ellipse([680, 50, 790, 160], fill=(250, 204, 80))
    d.polygon([(0, 300), (180, 190), (380, 280), (560, 170), (900, 290), (900, 450), (0, 450)], fill=(86, 142, 72))
    d.polygon([(0, 340), (250, 270), (520, 330), (900, 300), (900, 450), (0, 450)], fill=(122, 170, 84))
    d.polygon([(380, 450), (470, 330), (520, 330), (560, 450)], fill=(70, 120, 180))
    for x0 in (90, 230, 640):
        h = int(rng.integers(60, 90))
        d.rectangle([x0, 360 - h, x0 + 90, 360], fill=(214, 120, 74))
        d.polygon([(x0 - 10, 360 - h), (x0 + 45, 360 - h - 45), (x0 + 100, 360 - h)], fill=(150, 62, 50))
        d.rectangle([x0 + 35, 320, x0 + 55, 360], fill=(60, 40, 30))
    return img


def main() -> None:
    community_wall().save(HERE / "community-wall.png")
    Image.fromarray(data.coffee()).save(HERE / "coffee.jpg", quality=92)
    Image.fromarray(data.chelsea()).save(HERE / "chelsea.jpg", quality=92)


if __name__ == "__main__":
    main()
