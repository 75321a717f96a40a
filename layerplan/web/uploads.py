"""Photos kept for a short while between two tries of the start page's form.

When the form is refused (a bad width, say), the photo that came with it is kept here
under a generated token, so the page can say "using wall.jpg" and the painter need not
choose it again. A kept photo is removed when a plan is made from it, when another photo
replaces it, or after :data:`KEEP_S` seconds; and the oldest go first whenever the kept
photos together would hold more than ``max_bytes`` (:data:`MAX_BYTES`), so refused forms
can never fill the disk.

Layout under the data directory::

    uploads/<token>        the photo's bytes
    uploads/<token>.name   its original file name (only ever shown, never used as a path)
"""

from __future__ import annotations

import os
import re
import secrets
import time
from pathlib import Path

#: how long a kept photo waits for the next try, seconds (1 hour)
KEEP_S = 3600.0
#: tokens are 32 lower-case hex digits (128 random bits from :mod:`secrets`)
TOKEN_PATTERN = re.compile(r"^[0-9a-f]{32}$")
NAME_SUFFIX = ".name"
#: kept photos hold at most this many bytes together (200 MB: eight full-size uploads)
MAX_BYTES = 200_000_000


class UploadStash:
    """Photos kept under random tokens in ``data_dir/uploads``.

    Parameters
    ----------
    data_dir : path
        The app's data directory.
    keep_s : float, keyword-only
        A kept photo older than this is gone.
    max_bytes : int, keyword-only
        The kept photos hold at most this many bytes together; the oldest go first.
    """

    def __init__(self, data_dir: str | os.PathLike, *, keep_s: float = KEEP_S, max_bytes: int = MAX_BYTES):
        if not keep_s > 0:
            raise ValueError(f"keep_s must be > 0, got {keep_s!r}")
        if not isinstance(max_bytes, int) or max_bytes < 0:
            raise ValueError(f"max_bytes must be a whole number >= 0, got {max_bytes!r}")
        self.folder = Path(data_dir) / "uploads"
        self.keep_s = float(keep_s)
        self.max_bytes = max_bytes

    def _path(self, token: str) -> Path | None:
        return self.folder / token if TOKEN_PATTERN.match(token or "") else None

    def put(self, data: bytes, name: str) -> str | None:
        """Keep a photo; return its token (None when it alone is over ``max_bytes``, or the disk is full).
        Sweeps out expired photos first, then the oldest until the new one fits."""
        self.sweep()
        if len(data) > self.max_bytes:
            return None
        self._make_room(len(data))
        self.folder.mkdir(parents=True, exist_ok=True)
        token = secrets.token_hex(16)
        path = self.folder / token
        tmp = path.with_name(token + ".tmp")
        try:
            tmp.write_bytes(data)
            path.with_name(token + NAME_SUFFIX).write_text(name[:200], encoding="utf-8")
            os.replace(tmp, path)
        except OSError:  # a full disk: the form is answered all the same, without keeping the photo
            for p in (tmp, path, path.with_name(token + NAME_SUFFIX)):
                p.unlink(missing_ok=True)
            return None
        return token

    def kept(self) -> list[tuple[float, int, str]]:
        """(time kept, bytes, token) of each kept photo, oldest first."""
        found = []
        try:
            entries = list(self.folder.iterdir())
        except FileNotFoundError:
            return []
        for p in entries:
            if TOKEN_PATTERN.match(p.name):
                try:
                    st = p.stat()
                except FileNotFoundError:
                    continue
                found.append((st.st_mtime, st.st_size, p.name))
        return sorted(found)

    def _make_room(self, n_bytes: int) -> None:
        photos = self.kept()
        total = sum(size for _, size, _ in photos)
        for _, size, token in photos:
            if total + n_bytes <= self.max_bytes:
                break
            self.discard(token)
            total -= size

    def get(self, token: str) -> tuple[bytes, str] | None:
        """The kept photo and its original name, or None if there is none (or it expired)."""
        path = self._path(token)
        if path is None:
            return None
        try:
            if time.time() - path.stat().st_mtime > self.keep_s:
                self.discard(token)
                return None
            data = path.read_bytes()
            name = path.with_name(token + NAME_SUFFIX).read_text(encoding="utf-8")
        except OSError:
            return None
        return data, name

    def name(self, token: str) -> str | None:
        """The original name of a kept photo, or None."""
        kept = self.get(token)
        return kept[1] if kept else None

    def discard(self, token: str) -> None:
        path = self._path(token)
        if path is None:
            return
        for p in (path, path.with_name(token + NAME_SUFFIX)):
            try:
                p.unlink()
            except FileNotFoundError:
                pass

    def sweep(self, now: float | None = None) -> int:
        """Remove photos kept longer than ``keep_s``; return how many went."""
        now = time.time() if now is None else now
        gone = 0
        try:
            entries = list(self.folder.iterdir())
        except FileNotFoundError:
            return 0
        for p in entries:
            token = p.name.split(".", 1)[0]
            if not TOKEN_PATTERN.match(token):
                continue
            try:
                if now - p.stat().st_mtime > self.keep_s:
                    p.unlink()
                    gone += p.name == token
            except FileNotFoundError:
                pass
        return gone
