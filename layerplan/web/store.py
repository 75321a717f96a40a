"""Plan records: state, progress and settings in SQLite (WAL), files in a folder per plan.

Layout under the data directory::

    layerplan.sqlite3          one row per plan (table ``plans``), app settings (table ``app_settings``)
    plans/<id>/upload          the photo as uploaded (a generated name; the client's name is only shown)
    plans/<id>/out/            what :func:`layerplan.export.write_outputs` wrote
    plans/<id>/out.<pid>.tmp/  a worker's files while it writes them (renamed to ``out`` when complete)

A plan record names its owner (a one-way hash of the owner's token, never the token) and
carries a lease while it runs: the worker's process id, that process's start time and the
host, so a restarted server can tell a worker still at work from a dead one and never runs
one plan twice at once.

Every call opens its own short-lived connection, so the web threads and the worker
processes can share the database; WAL lets readers go on while a worker writes progress.

References
----------
SQLite, "Write-Ahead Logging", https://www.sqlite.org/wal.html
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import socket
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

#: columns added after the first release, with their declarations (added to an older database on open)
_LATER_COLUMNS = {
    "owner": "TEXT NOT NULL DEFAULT ''",
    "private": "INTEGER NOT NULL DEFAULT 0",
    "lease_pid": "INTEGER",
    "lease_start": "TEXT NOT NULL DEFAULT ''",
    "lease_host": "TEXT NOT NULL DEFAULT ''",
}

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
    #: hash of the owner's token (:func:`owner_key`); "" for plans made before owners existed
    owner: str = ""
    #: only the owner (and the admin) may see it
    private: bool = False
    #: the worker holding the plan while it runs: process id, its start time, host
    lease: tuple[int | None, str, str] = (None, "", "")


class DiskFull(OSError):
    """The data directory's disk (or the database) is full; the message says what could not be written."""


def is_disk_full(exc: BaseException) -> bool:
    """True for the errors a full disk (or quota) raises: ENOSPC/EDQUOT, SQLite's "database or disk is full"."""
    if isinstance(exc, DiskFull):
        return True
    if isinstance(exc, OSError) and exc.errno in (errno.ENOSPC, errno.EDQUOT):
        return True
    return isinstance(exc, sqlite3.OperationalError) and "full" in str(exc).lower()


def owner_key(token: str) -> str:
    """What the database keeps of an owner token: its SHA-256, so a copy of the database gives no one's cookie."""
    return hashlib.sha256(token.encode("utf-8")).hexdigest()[:32]


def process_start(pid: int) -> str:
    """A process's start time as the kernel counts it (Linux ``/proc/<pid>/stat`` field 22); "" if unknown.

    With the pid it names one process for good: a pid reused by a later process has another start time.

    References
    ----------
    proc(5), Linux man-pages: ``/proc/pid/stat``, field (22) ``starttime``.
    """
    try:
        with open(f"/proc/{int(pid)}/stat", "rb") as f:
            stat = f.read().decode("ascii", "replace")
    except OSError:
        return ""
    # the command name (field 2) is in parentheses and may itself hold spaces or parentheses
    fields = stat[stat.rfind(")") + 2:].split()
    return fields[19] if len(fields) > 19 else ""


def lease_alive(pid: int | None, start: str, host: str) -> bool:
    """True when the process a lease names still runs on this host (same pid, same start time)."""
    if not pid or (host and host != socket.gethostname()):
        return False
    try:
        os.kill(int(pid), 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        pass  # it exists, run by someone else
    if _process_state(pid) in ("Z", "X"):
        return False  # finished, only not yet reaped by its parent
    now = process_start(pid)
    return not start or not now or now == start


def _process_state(pid: int) -> str:
    """The kernel's one-letter state of a process (``R``, ``S``, ``Z``…; proc(5) field 3); "" if unknown."""
    try:
        with open(f"/proc/{int(pid)}/stat", "rb") as f:
            stat = f.read().decode("ascii", "replace")
    except OSError:
        return ""
    fields = stat[stat.rfind(")") + 2:].split()
    return fields[0] if fields else ""


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
            have = {row[1] for row in db.execute("PRAGMA table_info(plans)")}
            for name, declaration in _LATER_COLUMNS.items():
                if name not in have:
                    db.execute(f"ALTER TABLE plans ADD COLUMN {name} {declaration}")
            db.execute("CREATE INDEX IF NOT EXISTS plans_owner ON plans (owner, created_at)")
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
               inventory_text: str | None = None, plan_id: str | None = None, owner: str = "",
               private: bool = False) -> str:
        """Store the upload under a generated name and add a queued record; return the id.

        Either both the folder and the record are there afterwards, or neither is.

        Raises
        ------
        DiskFull
            The disk or the database is full (nothing is left behind).
        """
        plan_id = plan_id or new_plan_id()
        folder = self.plan_dir(plan_id)
        folder.mkdir(parents=True, exist_ok=False)
        try:
            if inventory_text is not None:
                (folder / INVENTORY_NAME).write_text(inventory_text, encoding="utf-8")
            tmp = folder / (UPLOAD_NAME + ".tmp")
            tmp.write_bytes(image_bytes)
            os.replace(tmp, folder / UPLOAD_NAME)
            self._exec(
                "INSERT INTO plans (id, state, progress, message, settings, source_name, created_at, owner, private)"
                " VALUES (?, 'queued', 0, ?, ?, ?, ?, ?, ?)",
                (plan_id, WAITING_MESSAGE, json.dumps(settings, sort_keys=True), source_name[:200], time.time(),
                 owner, int(bool(private))),
            )
        except BaseException as exc:
            shutil.rmtree(folder, ignore_errors=True)
            if is_disk_full(exc):
                raise DiskFull(errno.ENOSPC, "the server's disk is full: the photo could not be stored") from exc
            raise
        return plan_id

    def get(self, plan_id: str) -> PlanRecord | None:
        if not valid_plan_id(plan_id):
            return None
        with closing(self._connect()) as db:
            row = db.execute("SELECT * FROM plans WHERE id = ?", (plan_id,)).fetchone()
        return _record(row) if row else None

    def recent(self, limit: int = 50, *, owner: str | None = None) -> list[PlanRecord]:
        """Newest first; only ``owner``'s plans when given."""
        where, args = ("WHERE owner = ?", (owner,)) if owner is not None else ("", ())
        with closing(self._connect()) as db:
            rows = db.execute(f"SELECT * FROM plans {where} ORDER BY created_at DESC, id LIMIT ?",
                              (*args, int(limit))).fetchall()
        return [_record(r) for r in rows]

    def count_queued(self, *, owner: str | None = None) -> int:
        """Plans waiting or running (all, or ``owner``'s)."""
        where, args = ("AND owner = ?", (owner,)) if owner is not None else ("", ())
        with closing(self._connect()) as db:
            return db.execute(f"SELECT COUNT(*) FROM plans WHERE state IN ('queued', 'running') {where}",
                              args).fetchone()[0]

    def set_private(self, plan_id: str, private: bool) -> bool:
        return self._exec("UPDATE plans SET private = ? WHERE id = ?", (int(bool(private)), plan_id)) == 1

    def finished_before(self, when: float) -> list[str]:
        """Ids of done or failed plans that finished before the Unix time ``when``."""
        with closing(self._connect()) as db:
            rows = db.execute("SELECT id FROM plans WHERE state IN ('done', 'failed') AND"
                              " COALESCE(finished_at, created_at) < ? ORDER BY created_at", (when,)).fetchall()
        return [r[0] for r in rows]

    def all_ids(self) -> list[str]:
        with closing(self._connect()) as db:
            return [r[0] for r in db.execute("SELECT id FROM plans ORDER BY created_at, id")]

    def ids_in_state(self, state: str) -> list[str]:
        """Ids in ``state``, oldest first."""
        with closing(self._connect()) as db:
            rows = db.execute("SELECT id FROM plans WHERE state = ? ORDER BY created_at, id", (state,)).fetchall()
        return [r[0] for r in rows]

    def count_in_state(self, state: str) -> int:
        with closing(self._connect()) as db:
            return db.execute("SELECT COUNT(*) FROM plans WHERE state = ?", (state,)).fetchone()[0]

    def mark_running(self, plan_id: str, *, pid: int | None = None) -> bool:
        """queued -> running, taking the plan's lease for process ``pid`` (this process by default).

        False if the plan is gone or not queued (deleted meanwhile, or another worker has it):
        one UPDATE decides, so two workers can never both take it.
        """
        pid = os.getpid() if pid is None else int(pid)
        return self._exec(
            "UPDATE plans SET state = 'running', started_at = ?, attempts = attempts + 1, message = 'starting',"
            " lease_pid = ?, lease_start = ?, lease_host = ? WHERE id = ? AND state = 'queued'",
            (time.time(), pid, process_start(pid), socket.gethostname(), plan_id),
        ) == 1

    def holds_lease(self, plan_id: str, pid: int | None = None) -> bool:
        """True while ``plan_id`` is running under the lease of process ``pid`` (this process by default)."""
        pid = os.getpid() if pid is None else int(pid)
        with closing(self._connect()) as db:
            row = db.execute("SELECT 1 FROM plans WHERE id = ? AND state = 'running' AND lease_pid = ?",
                             (plan_id, pid)).fetchone()
        return row is not None

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

    def mark_done(self, plan_id: str, message: str = "plan ready", *, pid: int | None = None) -> bool:
        """running -> done; with ``pid``, only while that process holds the lease."""
        sql = ("UPDATE plans SET state = 'done', progress = 1, message = ?, finished_at = ?, lease_pid = NULL"
               " WHERE id = ? AND state = 'running'")
        args: tuple = (message, time.time(), plan_id)
        if pid is not None:
            sql += " AND lease_pid = ?"
            args += (int(pid),)
        return self._exec(sql, args) == 1

    def mark_failed(self, plan_id: str, message: str, *, from_states: tuple[str, ...] = ("queued", "running")) -> bool:
        marks = ",".join("?" * len(from_states))
        return self._exec(
            f"UPDATE plans SET state = 'failed', message = ?, finished_at = ?, lease_pid = NULL"
            f" WHERE id = ? AND state IN ({marks})",
            (str(message)[:2000], time.time(), plan_id, *from_states),
        ) == 1

    def requeue(self, plan_id: str, message: str) -> bool:
        """running -> queued for a new attempt (after a restart); progress restarts at 0 with it."""
        return self._exec(
            "UPDATE plans SET state = 'queued', progress = 0, message = ?, started_at = NULL, lease_pid = NULL"
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

    # ---------------------------------------------------------- consistency
    def check_consistency(self) -> dict[str, list[str]]:
        """Make folders and records agree again (run at start, while no worker runs); say what was done.

        * a plan folder with no record (a submit cut short) is removed;
        * a record with no folder is kept for its owner to read, marked failed if it was not finished,
          and given an empty folder again;
        * files a worker was writing when it was stopped (``out.<pid>.tmp``, ``upload.tmp``) are removed.

        Returns
        -------
        dict
            ``{"removed_folders": [...], "records_without_folder": [...], "partial_files": [...]}``
        """
        report: dict[str, list[str]] = {"removed_folders": [], "records_without_folder": [], "partial_files": []}
        ids = set(self.all_ids())
        for entry in sorted(self.plans_dir.iterdir()):
            if not valid_plan_id(entry.name):
                continue  # not ours: left alone
            if entry.name not in ids:
                shutil.rmtree(entry, ignore_errors=True)
                report["removed_folders"].append(entry.name)
                continue
            for part in entry.iterdir():
                if part.name.endswith(".tmp"):
                    if part.is_dir():
                        shutil.rmtree(part, ignore_errors=True)
                    else:
                        part.unlink(missing_ok=True)
                    report["partial_files"].append(f"{entry.name}/{part.name}")
        for plan_id in sorted(ids):
            folder = self.plans_dir / plan_id
            if folder.is_dir():
                continue
            report["records_without_folder"].append(plan_id)
            self.mark_failed(plan_id, "the plan's folder is missing from the data directory (its photo and files "
                                      "are gone); delete it and submit the photo again",
                             from_states=("queued", "running", "done"))
            folder.mkdir(parents=True, exist_ok=True)
        return report

    def size_bytes(self) -> int:
        """Bytes the data directory holds (database and every file under it)."""
        total = 0
        for root, _dirs, files in os.walk(self.data_dir):
            for f in files:
                try:
                    total += os.lstat(os.path.join(root, f)).st_size
                except OSError:
                    pass
        return total

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


def _settings_of(text: str) -> dict[str, Any]:
    """A record's settings; one that cannot be read back (a number past Python's digit limit, damage)
    reads as empty, so listing plans never fails over one record."""
    try:
        value = json.loads(text)
    except (ValueError, RecursionError):
        return {}
    return value if isinstance(value, dict) else {}


def _record(row: sqlite3.Row) -> PlanRecord:
    return PlanRecord(
        id=row["id"],
        state=row["state"],
        progress=float(row["progress"]),
        message=row["message"],
        settings=_settings_of(row["settings"]),
        source_name=row["source_name"],
        attempts=int(row["attempts"]),
        created_at=float(row["created_at"]),
        started_at=row["started_at"],
        finished_at=row["finished_at"],
        owner=row["owner"],
        private=bool(row["private"]),
        lease=(row["lease_pid"], row["lease_start"], row["lease_host"]),
    )
