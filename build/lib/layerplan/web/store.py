"""Plan records: state, progress and settings in SQLite (WAL), files in a folder per plan.

Layout under the data directory::

    layerplan.sqlite3          one row per plan (table ``plans``), app settings (table ``app_settings``)
    plans/<id>/upload          the photo as uploaded (a generated name; the client's name is only shown)
    plans/<id>/out/            what :func:`layerplan.export.write_outputs` wrote

Every call opens its own short-lived connection, so the web threads and the worker
processes can share the database; WAL lets readers go on while a worker writes progress.

References
----------
SQLite, "Write-Ahead Logging", https://www.sqlite.org/wal.html
"""

from __future__ import annotations

import json
import os
import re
import secrets
import shutil
import sqlite3
import time
from contextlib import closing
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterator

#: the states a plan moves through (queued -> running -> done | failed)
STATES = ("queued", "running", "done", "failed")
#: plan ids are 16 lower-case hex digits (64 random bits from :mod:`secrets`)
ID_PATTERN = re.compile(r"^[0-9a-f]{16}$")
#: how long a connection waits for a writer before giving up, seconds
BUSY_TIMEOUT_S = 10.0
DB_NAME = "layerplan.sqlite3"
UPLOAD_NAME = "upload"
INVENTORY_NAME = "inventory.toml"
WAITING_MESSAGE = "waiting for a free worker"
OUT_DIR = "out"
#: key in a record's settings holding what the web app adds to the planner's settings:
#: ``{"output": export options, "wall_mm": [width, height], "mm_per_px": working pixel}``
WEB_KEY = "web"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS plans (
    id          TEXT PRIMARY KEY,
    state       TEXT NOT NULL CHECK (state IN ('queued', 'running', 'done', 'failed')),
    progress    REAL NOT NULL DEFAULT 0,
    message     TEXT NOT NULL DEFAULT '',
    settings    TEXT NOT NULL,
    source_name TEXT NOT NULL DEFAULT '',
    attempts    INTEGER NOT NULL DEFAULT 0,
    created_at  REAL NOT NULL,
    started_at  REAL,
    finished_at REAL
);
CREATE INDEX IF NOT EXISTS plans_created ON plans (created_at);
CREATE TABLE IF NOT EXISTS app_settings (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
"""


@dataclass
class PlanRecord:
    """One row of ``plans``."""

    id: str
    state: str
    progress: float
    message: str
    settings: dict[str, Any]
    source_name: str
    attempts: int
    created_at: float
    started_at: float | None
    finished_at: float | None
    extra: dict[str, Any] = field(default_factory=dict)


def new_plan_id() -> str:
    """A fresh random plan id (also the plan's folder name)."""
    return secrets.token_hex(8)


def valid_plan_id(plan_id: str) -> bool:
    """True when ``plan_id`` has the shape of an id we generate (so it is safe as a folder name)."""
    return bool(ID_PATTERN.match(plan_id or ""))


class PlanStore:
    """Plan records and plan folders under one data directory.

    Parameters
    ----------
    data_dir : path
        Created if missing.
    """

    def __init__(self, data_dir: str | os.PathLike):
        self.data_dir = Path(data_dir)
        self.plans_dir = self.data_dir / "plans"
        self.plans_dir.mkdir(parents=True, exist_ok=True)
        self.db_path = self.data_dir / DB_NAME
        with closing(self._connect()) as db:
            db.execute("PRAGMA journal_mode=WAL")
            db.executescript(_SCHEMA)
            db.commit()

    # ------------------------------------------------------------ plumbing
    def _connect(self) -> sqlite3.Connection:
        db = sqlite3.connect(self.db_path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        db.row_factory = sqlite3.Row
        db.execute(f"PRAGMA busy_timeout={int(BUSY_TIMEOUT_S * 1000)}")
        db.execute("PRAGMA synchronous=NORMAL")  # safe with WAL; a power cut loses at most the last commit
        return db

    def _exec(self, sql: str, args: tuple = ()) -> int:
        with closing(self._connect()) as db:
            return db.execute(sql, args).rowcount

    def journal_mode(self) -> str:
        """The database's journal mode (``"wal"`` once opened by us)."""
        with closing(self._connect()) as db:
            return db.execute("PRAGMA journal_mode").fetchone()[0]

    # ------------------------------------------------------------- folders
    def plan_dir(self, plan_id: str) -> Path:
        if not valid_plan_id(plan_id):
            raise ValueError(f"not a plan id: {plan_id!r}")
        return self.plans_dir / plan_id

    def upload_path(self, plan_id: str) -> Path:
        return self.plan_dir(plan_id) / UPLOAD_NAME

    def out_dir(self, plan_id: str) -> Path:
        return self.plan_dir(plan_id) / OUT_DIR

    def output_files(self, plan_id: str) -> list[str]:
        """Relative names (``/``-separated) of the regular files a plan's export wrote, sorted."""
        out = self.out_dir(plan_id)
        if not out.is_dir():
            return []
        names = []
        for root, dirs, files in os.walk(out):
            dirs[:] = sorted(d for d in dirs if not d.startswith(".") and not os.path.islink(os.path.join(root, d)))
            for f in files:
                p = Path(root) / f
                if f.startswith(".") or p.is_symlink() or not p.is_file():
                    continue
                names.append(p.relative_to(out).as_posix())
        return sorted(names)

    # ------------------------------------------------------------- records
    def inventory_path(self, plan_id: str) -> Path:
        return self.plan_dir(plan_id) / INVENTORY_NAME

    def create(self, settings: dict[str, Any], image_bytes: bytes, *, source_name: str = "",
               inventory_text: str | None = None, plan_id: str | None = None) -> str:
        """Store the upload under a generated name and add a queued record; return the id."""
        plan_id = plan_id or new_plan_id()
        folder = self.plan_dir(plan_id)
        folder.mkdir(parents=True, exist_ok=False)
        if inventory_text is not None:
            (folder / INVENTORY_NAME).write_text(inventory_text, encoding="utf-8")
        tmp = folder / (UPLOAD_NAME + ".tmp")
        tmp.write_bytes(image_bytes)
        os.replace(tmp, folder / UPLOAD_NAME)
        self._exec(
            "INSERT INTO plans (id, state, progress, message, settings, source_name, created_at)"
            " VALUES (?, 'queued', 0, ?, ?, ?, ?)",
            (plan_id, WAITING_MESSAGE, json.dumps(settings, sort_keys=True), source_name[:200], time.time()),
        )
        return plan_id

    def get(self, plan_id: str) -> PlanRecord | None:
        if not valid_plan_id(plan_id):
            return None
        with closing(self._connect()) as db:
            row = db.execute("SELECT * FROM plans WHERE id = ?", (plan_id,)).fetchone()
        return _record(row) if row else None

    def recent(self, limit: int = 50) -> list[PlanRecord]:
        """Newest first."""
        with closing(self._connect()) as db:
            rows = db.execute("SELECT * FROM plans ORDER BY created_at DESC, id LIMIT ?", (int(limit),)).fetchall()
        return [_record(r) for r in rows]

    def ids_in_state(self, state: str) -> list[str]:
        """Ids in ``state``, oldest first."""
        with closing(self._connect()) as db:
            rows = db.execute("SELECT id FROM plans WHERE state = ? ORDER BY created_at, id", (state,)).fetchall()
        return [r[0] for r in rows]

    def count_in_state(self, state: str) -> int:
        with closing(self._connect()) as db:
            return db.execute("SELECT COUNT(*) FROM plans WHERE state = ?", (state,)).fetchone()[0]

    def mark_running(self, plan_id: str) -> bool:
        """queued -> running; False if the plan is gone or not queued (deleted meanwhile)."""
        return self._exec(
            "UPDATE plans SET state = 'running', started_at = ?, attempts = attempts + 1, message = 'starting'"
            " WHERE id = ? AND state = 'queued'",
            (time.time(), plan_id),
        ) == 1

    def set_progress(self, plan_id: str, fraction: float, message: str) -> None:
        """Record progress of a running plan; the stored fraction never decreases."""
        fraction = min(max(float(fraction), 0.0), 1.0)
        self._exec(
            "UPDATE plans SET progress = MAX(progress, ?), message = ? WHERE id = ? AND state = 'running'",
            (fraction, str(message)[:500], plan_id),
        )

    def set_message(self, plan_id: str, message: str, *, state: str, replacing: str | None = None) -> None:
        """Change the message of a plan in ``state`` (only if it reads ``replacing``, when given)."""
        sql = "UPDATE plans SET message = ? WHERE id = ? AND state = ?"
        args: tuple = (str(message)[:500], plan_id, state)
        if replacing is not None:
            sql += " AND message = ?"
            args += (replacing,)
        self._exec(sql, args)

    def mark_done(self, plan_id: str, message: str = "plan ready") -> bool:
        return self._exec(
            "UPDATE plans SET state = 'done', progress = 1, message = ?, finished_at = ?"
            " WHERE id = ? AND state = 'running'",
            (message, time.time(), plan_id),
        ) == 1

    def mark_failed(self, plan_id: str, message: str, *, from_states: tuple[str, ...] = ("queued", "running")) -> bool:
        marks = ",".join("?" * len(from_states))
        return self._exec(
            f"UPDATE plans SET state = 'failed', message = ?, finished_at = ? WHERE id = ? AND state IN ({marks})",
            (str(message)[:2000], time.time(), plan_id, *from_states),
        ) == 1

    def requeue(self, plan_id: str, message: str) -> bool:
        """running -> queued for a new attempt (after a restart); progress restarts at 0 with it."""
        return self._exec(
            "UPDATE plans SET state = 'queued', progress = 0, message = ?, started_at = NULL"
            " WHERE id = ? AND state = 'running'",
            (message, plan_id),
        ) == 1

    def delete(self, plan_id: str) -> bool:
        """Remove the record and the plan's folder. False if there was no such plan."""
        if not valid_plan_id(plan_id):
            return False
        gone = self._exec("DELETE FROM plans WHERE id = ?", (plan_id,)) == 1
        shutil.rmtree(self.plans_dir / plan_id, ignore_errors=True)
        return gone

    # -------------------------------------------------------- app settings
    def get_setting(self, key: str, default: Any = None) -> Any:
        with closing(self._connect()) as db:
            row = db.execute("SELECT value FROM app_settings WHERE key = ?", (key,)).fetchone()
        return json.loads(row[0]) if row else default

    def put_setting(self, key: str, value: Any) -> None:
        self._exec(
            "INSERT INTO app_settings (key, value) VALUES (?, ?)"
            " ON CONFLICT(key) DO UPDATE SET value = excluded.value",
            (key, json.dumps(value)),
        )

    def __iter__(self) -> Iterator[PlanRecord]:
        return iter(self.recent(limit=1_000_000))


def _record(row: sqlite3.Row) -> PlanRecord:
    return PlanRecord(
        id=row["id"],
        state=row["state"],
        progress=float(row["progress"]),
        message=row["message"],
        settings=json.loads(row["settings"]),
        source_name=row["source_name"],
        attempts=int(row["attempts"]),
        created_at=float(row["created_at"]),
        started_at=row["started_at"],
        finished_at=row["finished_at"],
    )
