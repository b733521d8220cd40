"""SQLite store of a study's cases: every finished case is committed as it arrives.

One file, ``study.sqlite``, in the output folder. The journal is in WAL mode
with ``synchronous=NORMAL``: a committed case survives a crash, ``kill -9`` or
Ctrl-C of the runner (only a power loss can drop the last commits). Only
finished cases are stored, one row per case id (primary key), so resuming
runs exactly the case ids that have no row and no case is ever stored twice.

The ``meta`` table keeps the study's fingerprint: opening a folder with a
different study file is refused unless the caller asks to start over.
"""

from __future__ import annotations

import json
import math
import sqlite3
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Iterable, Iterator, Mapping, Sequence

from ..errors import StudyOutputConflictError

__all__ = ["StudyStore", "NullStore", "DB_NAME", "MSG_OTHER_STUDY", "encode_outcome"]

DB_NAME = "study.sqlite"
MSG_OTHER_STUDY = "holds results of a different study file"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS cases (
    case_id INTEGER PRIMARY KEY,
    case_key TEXT NOT NULL,
    status TEXT NOT NULL,
    message TEXT NOT NULL,
    inputs TEXT NOT NULL,
    metrics TEXT NOT NULL,
    result TEXT,
    elapsed_s REAL NOT NULL,
    attempts INTEGER NOT NULL DEFAULT 1,
    finished_utc TEXT NOT NULL
);
"""


def _json(obj: Any) -> str:
    try:
        return json.dumps(obj, separators=(",", ":"), allow_nan=False)
    except (ValueError, TypeError):
        pass

    def clean(o: Any) -> Any:
        if isinstance(o, float):
            return o if math.isfinite(o) else None
        if isinstance(o, Mapping):
            return {str(k): clean(v) for k, v in o.items()}
        if isinstance(o, (list, tuple)):
            return [clean(v) for v in o]
        return o

    return json.dumps(clean(obj), separators=(",", ":"), allow_nan=False, default=str)


def encode_outcome(outcome: dict[str, Any], inputs: Any = None) -> dict[str, Any]:
    """JSON-encode an outcome's metrics, result (and inputs) where it is produced.

    Workers call this so the runner, the one serial part of a study, only
    inserts rows. `StudyStore.record` accepts encoded and plain outcomes alike.
    """
    for k in ("metrics", "result"):
        v = outcome.get(k)
        if v is not None and not isinstance(v, str):
            outcome[k] = _json(v)
    if inputs is not None and "inputs_json" not in outcome:
        outcome["inputs_json"] = _json(inputs)
    return outcome


def _enc(v: Any) -> str:
    return v if isinstance(v, str) else _json(v)


def _decode(r: tuple) -> dict[str, Any]:
    return {"case_id": r[0], "key": r[1], "status": r[2], "message": r[3],
            "inputs": json.loads(r[4]), "metrics": json.loads(r[5]),
            "result": None if r[6] is None else json.loads(r[6]),
            "elapsed_s": r[7], "attempts": r[8], "finished_utc": r[9]}


class StudyStore:
    """The cases of one study in one SQLite file.

    Parameters
    ----------
    folder : str or Path
        Output folder; created if missing.
    fingerprint : str, optional
        The study's fingerprint. A store with another fingerprint raises
        `StudyOutputConflictError` unless ``restart=True``, which deletes the
        stored cases first, or unless the store holds no finished case (then
        it is taken over as if new). None opens an existing store read-only in intent
        (for reports).
    meta : mapping, optional
        Extra entries (JSON-able) written when the store is created.
    restart : bool
        Discard stored cases and start over.
    """

    def __init__(self, folder: str | Path, *, fingerprint: str | None = None,
                 meta: Mapping[str, Any] | None = None, restart: bool = False) -> None:
        self.folder = Path(folder)
        self.path = self.folder / DB_NAME
        if fingerprint is None and not self.path.exists():
            raise StudyOutputConflictError(str(self.folder), f"has no {DB_NAME}; run a study "
                                           f"into it first (sizing study FILE --out {self.folder}).")
        self.folder.mkdir(parents=True, exist_ok=True)
        self._con = sqlite3.connect(self.path, isolation_level=None, timeout=30.0)
        self._con.execute("PRAGMA journal_mode=WAL")
        self._con.execute("PRAGMA synchronous=NORMAL")
        self._con.execute("PRAGMA wal_autocheckpoint=8000")  # fewer checkpoints mid-study
        self._con.executescript(_SCHEMA)
        if fingerprint is None:
            return
        old = self.get_meta("fingerprint")
        if old is not None and old != fingerprint:
            # A folder holding no finished case (e.g. a run stopped before its first case
            # was stored) loses nothing when reused: take it over without --restart.
            n_stored = self._con.execute("SELECT COUNT(*) FROM cases").fetchone()[0]
            if not restart and n_stored > 0:
                self._con.close()
                raise StudyOutputConflictError(
                    str(self.folder),
                    f"{MSG_OTHER_STUDY} (stored {old[:12]}, now {fingerprint[:12]}). "
                    f"Pass --restart to discard the stored results and start over, "
                    f"or choose another --out folder.")
        if restart or old != fingerprint:
            self._con.execute("BEGIN IMMEDIATE")
            self._con.execute("DELETE FROM cases")
            self._con.execute("DELETE FROM meta")
            rows = {"fingerprint": fingerprint,
                    "created_utc": datetime.now(timezone.utc).isoformat(timespec="seconds")}
            rows.update({k: v if isinstance(v, str) else _json(v) for k, v in (meta or {}).items()})
            self._con.executemany("INSERT INTO meta VALUES (?, ?)", list(rows.items()))
            self._con.execute("COMMIT")

    # -- meta
    def get_meta(self, key: str) -> str | None:
        row = self._con.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return None if row is None else row[0]

    def set_meta(self, key: str, value: Any) -> None:
        self._con.execute("INSERT OR REPLACE INTO meta VALUES (?, ?)",
                          (key, value if isinstance(value, str) else _json(value)))

    # -- cases
    def record(self, outcomes: Iterable[Mapping[str, Any]], inputs: Mapping[int, Any]) -> int:
        """Commit finished cases in one transaction; returns how many rows were new.

        Parameters
        ----------
        outcomes : iterable of mapping
            From `evaluate_cases` (``case_id``, ``key``, ``status``, ``message``,
            ``metrics``, ``result``, ``elapsed_s``; optional ``attempts``).
        inputs : mapping
            case_id -> the case's inputs.
        """
        now = datetime.now(timezone.utc).isoformat(timespec="milliseconds")
        rows = [(o["case_id"], o["key"], o["status"], o["message"],
                 o.get("inputs_json") or _json(inputs[o["case_id"]]),
                 _enc(o.get("metrics") or {}),
                 None if o.get("result") is None else _enc(o["result"]),
                 float(o.get("elapsed_s", 0.0)), int(o.get("attempts", 1)), now)
                for o in outcomes]
        if not rows:
            return 0
        before = self._con.total_changes
        self._con.execute("BEGIN")
        try:
            self._con.executemany(
                "INSERT OR IGNORE INTO cases VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", rows)
        except BaseException:
            self._con.execute("ROLLBACK")
            raise
        self._con.execute("COMMIT")
        return self._con.total_changes - before

    def done_ids(self) -> set[int]:
        """Case ids that already have a stored outcome."""
        return {r[0] for r in self._con.execute("SELECT case_id FROM cases")}

    def counts(self) -> dict[str, int]:
        """Number of stored cases per status."""
        return dict(self._con.execute("SELECT status, COUNT(*) FROM cases GROUP BY status"))

    def rows(self, *, with_result: bool = True, case_id: int | None = None) -> list[dict[str, Any]]:
        """Stored cases as dicts, ordered by case id (JSON fields decoded)."""
        cols = ("case_id, case_key, status, message, inputs, metrics, "
                + ("result, " if with_result else "NULL, ") + "elapsed_s, attempts, finished_utc")
        where, args = ("WHERE case_id = ?", (int(case_id),)) if case_id is not None else ("", ())
        return [_decode(r) for r in self._con.execute(f"SELECT {cols} FROM cases {where} ORDER BY case_id", args)]

    def iter_rows(self, *, with_result: bool = True, case_ids: Iterable[int] | None = None,
                  chunk: int = 5000) -> Iterator[list[dict[str, Any]]]:
        """Stored cases in chunks of at most `chunk` rows, ordered by case id (JSON decoded).

        Only one chunk is in memory at a time, so a million-case study can be
        exported with bounded memory. ``case_ids`` restricts the rows read.
        """
        cols = ("case_id, case_key, status, message, inputs, metrics, "
                + ("result, " if with_result else "NULL, ") + "elapsed_s, attempts, finished_utc")
        if case_ids is None:
            cur = self._con.execute(f"SELECT {cols} FROM cases ORDER BY case_id")
            while True:
                batch = cur.fetchmany(chunk)
                if not batch:
                    return
                yield [_decode(r) for r in batch]
        ids = sorted({int(i) for i in case_ids})
        step = 900  # below SQLite's limit on bound parameters
        buf: list[dict[str, Any]] = []
        for i in range(0, len(ids), step):
            part = ids[i:i + step]
            q = f"SELECT {cols} FROM cases WHERE case_id IN ({','.join('?' * len(part))}) ORDER BY case_id"
            buf.extend(_decode(r) for r in self._con.execute(q, part))
            if len(buf) >= chunk:
                yield buf
                buf = []
        if buf:
            yield buf

    def metric_columns(self, metrics: Sequence[str]) -> tuple[list[int], list[str], list[tuple]]:
        """Case ids, statuses and the named metrics of every stored case, read in SQL.

        The metrics are pulled out of each row's JSON by SQLite (``json_extract``),
        so ranking a study never decodes its result blobs in Python.

        Returns
        -------
        (case_ids, statuses, values)
            ``values[i]`` holds the metrics of case i in the order asked (None when absent).
        """
        ex = "".join(", json_extract(metrics, ?)" for _ in metrics)
        args = [f'$."{m}"' for m in metrics]
        ids: list[int] = []
        status: list[str] = []
        vals: list[tuple] = []
        for r in self._con.execute(f"SELECT case_id, status{ex} FROM cases ORDER BY case_id", args):
            ids.append(r[0])
            status.append(r[1])
            vals.append(r[2:])
        return ids, status, vals

    def metric_names(self) -> list[str]:
        """Every metric name any stored case has: those of the first feasible case in its
        order, then the others in name order."""
        first = self._con.execute("SELECT metrics FROM cases WHERE status = 'ok' ORDER BY case_id LIMIT 1"
                                  ).fetchone()
        names = list(json.loads(first[0])) if first else []
        seen = set(names)
        extra = [k for (k,) in self._con.execute(
            "SELECT DISTINCT j.key FROM cases, json_each(cases.metrics) AS j ORDER BY j.key")
            if k not in seen]
        return names + extra

    def result_of(self, case_id: int) -> dict[str, Any] | None:
        """One stored case, or None."""
        rows = self.rows(case_id=case_id)
        return rows[0] if rows else None

    def close(self) -> None:
        try:
            self._con.close()
        except sqlite3.Error:
            pass

    def __enter__(self) -> "StudyStore":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


class NullStore:
    """A store that keeps nothing (benchmarks use it to measure the SQLite overhead)."""

    def __init__(self) -> None:
        self.n = 0

    def record(self, outcomes: Iterable[Mapping[str, Any]], inputs: Mapping[int, Any]) -> int:
        k = len(list(outcomes))
        self.n += k
        return k

    def done_ids(self) -> set[int]:
        return set()

    def counts(self) -> dict[str, int]:
        return {}

    def set_meta(self, key: str, value: Any) -> None:
        pass

    def close(self) -> None:
        pass

