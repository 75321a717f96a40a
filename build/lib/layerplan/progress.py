"""A terminal progress bar fed by the pipeline's progress(fraction, message) callback."""

from __future__ import annotations

import sys
import time


class TerminalBar:
    """Draws ``[#####-----]  45%  message`` on a stream (stderr by default).

    On a terminal the bar redraws in place; elsewhere (logs, CI) it prints a line when
    the stage changes, so logs stay short. Fractions never go backwards on screen.
    """

    def __init__(self, stream=None, *, width: int = 30):
        self.stream = stream or sys.stderr
        self.width = width
        self.tty = hasattr(self.stream, "isatty") and self.stream.isatty()
        self.shown = 0.0
        self.stage = None
        self.last_draw = 0.0

    def __call__(self, fraction: float, message: str) -> None:
        self.shown = max(self.shown, min(1.0, max(0.0, float(fraction))))
        stage = message.split(":")[0]
        now = time.monotonic()
        if self.tty:
            if now - self.last_draw < 0.1 and self.shown < 1.0 and stage == self.stage:
                return
            filled = int(round(self.width * self.shown))
            line = f"\r[{'#' * filled}{'-' * (self.width - filled)}] {self.shown * 100:3.0f}%  {message[:60]:<60}"
            self.stream.write(line)
            if self.shown >= 1.0:
                self.stream.write("\n")
        elif stage != self.stage:
            self.stream.write(f"[{self.shown * 100:3.0f}%] {message}\n")
        self.stage = stage
        self.last_draw = now
        self.stream.flush()
