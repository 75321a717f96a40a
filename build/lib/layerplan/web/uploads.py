"""Photos kept for a short while between two tries of the start page's form.

When the form is refused (a bad width, say), the photo that came with it is kept here
under a generated token, so the page can say "using wall.jpg" and the painter need not
choose it again. A kept photo is removed when a plan is made from it, when another photo
replaces it, or after :data:`KEEP_S` seconds.

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


class UploadStash:
    """Photos kept under random tokens in ``data_dir/uploads``.

    Parameters
    ----------
    data_dir : path
        The app's data directory.
    keep_s : float, keyword-only
        A kept photo older than this is gone.
    """

    def __init__(self, data_dir: str | os.PathLike, *, keep_s: float = KEEP_S):
        if not keep_s > 0:
            raise ValueError(f"keep_s must be > 0, got {keep_s!r}")
        self.folder = Path(data_dir) / "uploads"
        self.keep_s = float(keep_s)

    def _path(self, token: str) -> Path | None:
        return self.folder / token if TOKEN_PATTERN.match(token or "") else None

    def put(self, data: bytes, name: str) -> str:
        """Keep a photo; return its token. Sweeps out expired photos first."""
        self.sweep()
        self.folder.mkdir(parents=True, exist_ok=True)
        token = secrets.token_hex(16)
        path = self.folder / token
        tmp = path.with_name(token + ".tmp")
        tmp.write_bytes(data)
        path.with_name(token + NAME_SUFFIX).write_text(name[:200], encoding="utf-8")
        os.replace(tmp, path)
        return token

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
