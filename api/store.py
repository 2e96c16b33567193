"""The service's store: stored inputs, runs, jobs and their files (SQLAlchemy Core).

One code path for SQLite (the embedded default: WAL, foreign keys on, ``BEGIN
IMMEDIATE`` transactions) and PostgreSQL (by URL).  Every write is one transaction:
a run, its files and the job that made it appear together or not at all.  Files are
BLOBs addressed by the SHA-256 of their content (text files gzip-compressed), so a
file shared by inputs and runs is kept once and a crash never leaves half a file.

The schema carries its version (table ``meta``); :data:`MIGRATIONS` brings an older
store up to date when the service starts, in one transaction, and a store written by a
newer version is refused.  (A short list of steps instead of Alembic: the schema is
small and the steps must run inside the service's own start-up.)

Stored inputs that a run reads are written to ``files_dir`` (a cache: the path is the
content hash and the file's suffix) when a run needs them; the store stays the one
source of truth.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import gzip
import hashlib
import json
import os
import re
import secrets
import tempfile
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path, PurePath
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

__all__ = ["SCHEMA_VERSION", "Blob", "Store", "StoreError", "new_id", "sha256"]

SCHEMA_VERSION = 1

class UTCDateTime(sa.TypeDecorator[dt.datetime]):
    """A time in UTC, handed back with its zone (SQLite keeps none)."""

    impl = sa.DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: dt.datetime | None, dialect: Any
                           ) -> dt.datetime | None:
        return None if value is None else value.astimezone(dt.UTC)

    def process_result_value(self, value: dt.datetime | None, dialect: Any
                             ) -> dt.datetime | None:
        return None if value is None else _aware(value)


metadata = sa.MetaData()

meta = sa.Table("meta", metadata,
                sa.Column("key", sa.String(64), primary_key=True),
                sa.Column("value", sa.Text, nullable=False))

blobs = sa.Table("blobs", metadata,
                 sa.Column("sha256", sa.String(64), primary_key=True),
                 sa.Column("size", sa.BigInteger, nullable=False),
                 sa.Column("encoding", sa.String(16), nullable=False),  # identity | gzip
                 sa.Column("data", sa.LargeBinary, nullable=False))

inputs = sa.Table("inputs", metadata,
                  sa.Column("id", sa.String(32), primary_key=True),
                  sa.Column("kind", sa.String(16), nullable=False, index=True),
                  sa.Column("name", sa.Text, nullable=False),
                  sa.Column("created_at", UTCDateTime(), nullable=False),
                  sa.Column("content_hash", sa.String(64), nullable=False),
                  sa.Column("info", sa.JSON, nullable=False),
                  sa.Column("spec", sa.JSON, nullable=False))

input_files = sa.Table("input_files", metadata,
                       sa.Column("input_id", sa.String(32),
                                 sa.ForeignKey("inputs.id", ondelete="CASCADE"),
                                 primary_key=True),
                       sa.Column("role", sa.String(32), primary_key=True),
                       sa.Column("filename", sa.Text, nullable=False),
                       sa.Column("media_type", sa.String(64), nullable=False),
                       sa.Column("sha256", sa.String(64), sa.ForeignKey("blobs.sha256"),
                                 nullable=False, index=True))

runs = sa.Table("runs", metadata,
                sa.Column("id", sa.String(32), primary_key=True),
                sa.Column("kind", sa.String(16), nullable=False, index=True),
                sa.Column("name", sa.Text, nullable=False),
                sa.Column("input_hash", sa.String(64), nullable=False, unique=True),
                sa.Column("created_at", UTCDateTime(), nullable=False),
                sa.Column("tripsim_version", sa.String(32), nullable=False),
                sa.Column("request", sa.JSON, nullable=False),
                sa.Column("scenario", sa.JSON, nullable=False),
                sa.Column("inputs", sa.JSON, nullable=False),
                sa.Column("payload", sa.JSON, nullable=False),
                sa.Column("text", sa.Text, nullable=False),
                sa.Column("exit_code", sa.Integer, nullable=False),
                sa.Column("timings", sa.JSON, nullable=False),
                sa.Column("caution", sa.Text, nullable=False))

run_files = sa.Table("run_files", metadata,
                     sa.Column("run_id", sa.String(32),
                               sa.ForeignKey("runs.id", ondelete="CASCADE"), primary_key=True),
                     sa.Column("role", sa.String(32), primary_key=True),
                     sa.Column("filename", sa.Text, nullable=False),
                     sa.Column("media_type", sa.String(64), nullable=False),
                     sa.Column("sha256", sa.String(64), sa.ForeignKey("blobs.sha256"),
                               nullable=False, index=True))

jobs = sa.Table("jobs", metadata,
                sa.Column("id", sa.String(32), primary_key=True),
                sa.Column("kind", sa.String(16), nullable=False),
                sa.Column("state", sa.String(16), nullable=False, index=True),
                sa.Column("progress", sa.Float, nullable=False),
                sa.Column("message", sa.Text, nullable=False),
                sa.Column("input_hash", sa.String(64), nullable=True, index=True),
                sa.Column("request", sa.JSON, nullable=False),
                sa.Column("result_kind", sa.String(16), nullable=True),
                sa.Column("result_id", sa.String(32), nullable=True),
                sa.Column("problem", sa.JSON, nullable=True),
                sa.Column("owner", sa.Text, nullable=False),
                sa.Column("created_at", UTCDateTime(), nullable=False),
                sa.Column("started_at", UTCDateTime(), nullable=True),
                sa.Column("finished_at", UTCDateTime(), nullable=True),
                sa.Column("heartbeat_at", UTCDateTime(), nullable=False))

ACTIVE = ("queued", "running")
#: Text files are kept gzip-compressed (files are served decompressed or as they are).
_COMPRESS = ("text/", "application/json", "application/geo+json", "application/xml")


class StoreError(RuntimeError):
    """The store cannot be used (a newer schema, or no connection)."""


def now() -> dt.datetime:
    """The time in UTC (stored with its zone)."""
    return dt.datetime.now(dt.UTC)


def new_id(prefix: str) -> str:
    """A new id: the prefix and 12 random hex digits (``sim-3f9a0c1b2d4e``)."""
    return f"{prefix}-{secrets.token_hex(6)}"


def sha256(data: bytes) -> str:
    """Hex SHA-256 of some bytes."""
    return hashlib.sha256(data).hexdigest()


@dataclass(frozen=True)
class Blob:
    """A file ready to store: its name, media type, content hash and (encoded) bytes."""

    role: str
    filename: str
    media_type: str
    sha256: str
    size: int
    encoding: str
    data: bytes

    @classmethod
    def of(cls, role: str, filename: str, media_type: str, data: bytes) -> Blob:
        """Hash the content; compress text."""
        packed, encoding = data, "identity"
        if media_type.startswith(_COMPRESS) and len(data) > 1024:
            packed, encoding = gzip.compress(data, compresslevel=6, mtime=0), "gzip"
        return cls(role, filename, media_type, sha256(data), len(data), encoding, packed)


# --- migrations ---------------------------------------------------------------------------

def _v1(conn: Connection) -> None:
    metadata.create_all(conn)


#: Steps from each version to the next: MIGRATIONS[n] takes a store at version n to n + 1.
MIGRATIONS: dict[int, Callable[[Connection], None]] = {0: _v1}


def _sqlite_pragmas(dbapi_conn: Any, _record: Any) -> None:
    dbapi_conn.isolation_level = None  # transactions begin where SQLAlchemy says (below)
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA journal_mode=WAL")
    cur.execute("PRAGMA foreign_keys=ON")
    cur.execute("PRAGMA synchronous=FULL")
    cur.execute("PRAGMA busy_timeout=10000")
    cur.close()


def _sqlite_begin(conn: Connection) -> None:
    # A write takes the lock at once (no deadlock upgrading a read lock); reads share.
    read = conn.get_execution_options().get("tripsim_read", False)
    conn.exec_driver_sql("BEGIN" if read else "BEGIN IMMEDIATE")


def make_engine(url: str) -> Engine:
    """An engine for a SQLAlchemy URL; SQLite gets WAL, foreign keys and explicit BEGIN."""
    if url.startswith("sqlite"):
        engine = sa.create_engine(url, connect_args={"check_same_thread": False, "timeout": 10},
                                  pool_size=8, max_overflow=8)
        sa.event.listen(engine, "connect", _sqlite_pragmas)
        sa.event.listen(engine, "begin", _sqlite_begin)
        return engine
    return sa.create_engine(url, pool_size=8, max_overflow=8, pool_pre_ping=True)


class Store:
    """Stored inputs, runs, jobs and their files.

    Parameters
    ----------
    url : str
        SQLAlchemy URL (``sqlite:////path/tripsim.sqlite3``, ``postgresql+psycopg://…``).
    files_dir : Path
        Where stored inputs are written for the runs that read them (a cache).
    """

    def __init__(self, url: str, files_dir: Path) -> None:
        self.url = url
        #: Fault injection for the durability test: hold each run's transaction open this
        #: long before it commits, so a kill lands inside it.  [s]
        self.pause_before_commit_s = float(os.environ.get("TRIPSIM_STORE_PAUSE_S") or 0.0)
        self.files_dir = Path(files_dir)
        self.engine = make_engine(url)
        self.migrate()

    # --- schema ---------------------------------------------------------------------------

    def schema_version(self) -> int:
        """The schema version of the store (0 for an empty one)."""
        with self._read() as conn:
            if not sa.inspect(conn).has_table("meta"):
                return 0
            value = conn.execute(sa.select(meta.c.value).where(
                meta.c.key == "schema_version")).scalar()
            return int(value or 0)

    def migrate(self) -> None:
        """Bring the schema up to :data:`SCHEMA_VERSION`, in one transaction."""
        with self.engine.begin() as conn:
            has_meta = sa.inspect(conn).has_table("meta")
            version = int(conn.execute(sa.select(meta.c.value).where(
                meta.c.key == "schema_version")).scalar() or 0) if has_meta else 0
            if version > SCHEMA_VERSION:
                raise StoreError(f"the store has schema version {version}, newer than this "
                                 f"tripsim's ({SCHEMA_VERSION}): upgrade tripsim")
            for step in range(version, SCHEMA_VERSION):
                MIGRATIONS[step](conn)
            if version != SCHEMA_VERSION:
                conn.execute(sa.delete(meta).where(meta.c.key == "schema_version"))
                conn.execute(sa.insert(meta).values(key="schema_version",
                                                    value=str(SCHEMA_VERSION)))

    def close(self) -> None:
        """Close every connection."""
        self.engine.dispose()

    # --- blobs ----------------------------------------------------------------------------

    @staticmethod
    def _put_blobs(conn: Connection, items: Sequence[Blob]) -> set[str]:
        """Insert the files not stored yet; the hashes now stored (a ``ref`` adds nothing)."""
        shas = {b.sha256 for b in items}
        have = set(conn.execute(sa.select(blobs.c.sha256).where(
            blobs.c.sha256.in_(shas))).scalars()) if shas else set()
        for b in {b.sha256: b for b in items}.values():
            if b.sha256 not in have and b.encoding != "ref":
                conn.execute(sa.insert(blobs).values(sha256=b.sha256, size=b.size,
                                                     encoding=b.encoding, data=b.data))
                have.add(b.sha256)
        return have

    @staticmethod
    def _drop_orphans(conn: Connection, shas: set[str]) -> None:
        if not shas:
            return
        used = sa.union(sa.select(input_files.c.sha256), sa.select(run_files.c.sha256))
        conn.execute(sa.delete(blobs).where(blobs.c.sha256.in_(shas),
                                            blobs.c.sha256.not_in(used)))

    def blob(self, sha: str, *, decoded: bool = True) -> tuple[bytes, str]:
        """A file's bytes and encoding (decoded: always ``identity``)."""
        with self._read() as conn:
            row = conn.execute(sa.select(blobs.c.data, blobs.c.encoding).where(
                blobs.c.sha256 == sha)).one_or_none()
        if row is None:
            raise KeyError(sha)
        data, encoding = bytes(row.data), row.encoding
        if decoded and encoding == "gzip":
            return gzip.decompress(data), "identity"
        return data, encoding

    def _target(self, sha: str, filename: str) -> Path:
        """Where a stored file goes on disk: a folder per content hash, the file's own name.

        The name is made safe; readers use it in messages and ids (``lodgings.csv:5``).
        """
        name = re.sub(r"[^A-Za-z0-9._-]+", "_", PurePath(filename).name).lstrip(".") or "file"
        return self.files_dir / sha[:2] / sha / name[-120:]

    def materialize(self, sha: str, filename: str) -> Path:
        """The stored file as a file on disk (written once, atomically, then reused)."""
        target = self._target(sha, filename)
        if target.is_file() and target.stat().st_size > 0:
            return target
        return self.write_file(sha, filename, self.blob(sha)[0])

    def write_file(self, sha: str, filename: str, data: bytes) -> Path:
        """Write a file's bytes under its content hash (atomically; kept if already there)."""
        target = self._target(sha, filename)
        if target.is_file() and target.stat().st_size == len(data):
            return target
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=".part-",
                                   suffix="".join(target.suffixes[-2:]))
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, target)
        finally:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)
        return target

    # --- inputs ---------------------------------------------------------------------------

    def add_input(self, kind: str, prefix: str, name: str, info: dict[str, Any],
                  spec: dict[str, Any], files: Sequence[Blob], *,
                  job_id: str | None = None) -> dict[str, Any]:
        """Store an input and its files (and finish its job) in one transaction."""
        content = sha256(json.dumps([kind, spec, sorted((f.role, f.sha256) for f in files)],
                                    sort_keys=True).encode())
        row = {"id": new_id(prefix), "kind": kind, "name": name, "created_at": now(),
               "content_hash": content, "info": info, "spec": spec}
        with self.engine.begin() as conn:
            have = self._put_blobs(conn, files)
            conn.execute(sa.insert(inputs).values(**row))
            for f in (f for f in files if f.sha256 in have):
                conn.execute(sa.insert(input_files).values(
                    input_id=row["id"], role=f.role, filename=f.filename,
                    media_type=f.media_type, sha256=f.sha256))
            if job_id is not None:
                conn.execute(sa.update(jobs).where(jobs.c.id == job_id).values(
                    state="done", progress=1.0, message="stored", result_kind=kind,
                    result_id=row["id"], finished_at=now(), heartbeat_at=now()))
        return self.get_input(kind, row["id"])  # type: ignore[return-value]

    def get_input(self, kind: str, input_id: str) -> dict[str, Any] | None:
        """An input with its files, or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(inputs).where(inputs.c.id == input_id,
                                                       inputs.c.kind == kind)).one_or_none()
            if row is None:
                return None
            files = conn.execute(sa.select(input_files, blobs.c.size).join(blobs).where(
                input_files.c.input_id == input_id).order_by(input_files.c.role)).all()
        out = dict(row._mapping)
        out["files"] = [dict(f._mapping) for f in files]
        return out

    def list_inputs(self, kind: str, *, limit: int = 100, offset: int = 0
                    ) -> tuple[list[dict[str, Any]], int]:
        """Inputs of a kind, newest first, and how many there are."""
        with self._read() as conn:
            total = conn.execute(sa.select(sa.func.count()).select_from(inputs).where(
                inputs.c.kind == kind)).scalar_one()
            rows = conn.execute(sa.select(inputs).where(inputs.c.kind == kind).order_by(
                inputs.c.created_at.desc(), inputs.c.id).limit(limit).offset(offset)).all()
        return [dict(r._mapping) for r in rows], int(total)

    def delete_input(self, kind: str, input_id: str) -> bool:
        """Delete an input (runs made from it keep their copy of its files)."""
        with self.engine.begin() as conn:
            shas = set(conn.execute(sa.select(input_files.c.sha256).where(
                input_files.c.input_id == input_id)).scalars())
            gone = conn.execute(sa.delete(inputs).where(inputs.c.id == input_id,
                                                        inputs.c.kind == kind)).rowcount
            self._drop_orphans(conn, shas)
        return bool(gone)

    # --- runs -----------------------------------------------------------------------------

    def add_run(self, run: dict[str, Any], files: Sequence[Blob], *,
                job_id: str | None = None) -> dict[str, Any]:
        """Store a run with its files and finish its job, all in one transaction.

        When a run with the same input hash is already stored (two jobs raced), that
        one is kept and the job points to it.
        """
        with self.engine.begin() as conn:
            existing = conn.execute(sa.select(runs.c.id).where(
                runs.c.input_hash == run["input_hash"])).scalar()
            run_id = existing or run["id"]
            if existing is None:
                have = self._put_blobs(conn, files)
                conn.execute(sa.insert(runs).values(**run))
                for f in (f for f in files if f.sha256 in have):
                    conn.execute(sa.insert(run_files).values(
                        run_id=run_id, role=f.role, filename=f.filename,
                        media_type=f.media_type, sha256=f.sha256))
            if job_id is not None:
                conn.execute(sa.update(jobs).where(jobs.c.id == job_id).values(
                    state="done", progress=1.0, message="stored", result_kind=run["kind"],
                    result_id=run_id, finished_at=now(), heartbeat_at=now()))
            if self.pause_before_commit_s:
                time.sleep(self.pause_before_commit_s)
        return self.get_run(run["kind"], run_id)  # type: ignore[return-value]

    def add_run_file(self, run_id: str, blob: Blob) -> dict[str, Any] | None:
        """Add a file to a stored run (one made later from its trace); its row."""
        with self.engine.begin() as conn:
            if conn.execute(sa.select(runs.c.id).where(runs.c.id == run_id)).scalar() is None:
                return None
            have = conn.execute(sa.select(run_files.c.sha256).where(
                run_files.c.run_id == run_id, run_files.c.role == blob.role)).scalar()
            if have is None:
                self._put_blobs(conn, [blob])
                conn.execute(sa.insert(run_files).values(
                    run_id=run_id, role=blob.role, filename=blob.filename,
                    media_type=blob.media_type, sha256=blob.sha256))
            row = conn.execute(sa.select(run_files).where(
                run_files.c.run_id == run_id, run_files.c.role == blob.role)).one()
        return dict(row._mapping)

    def find_run(self, input_hash: str) -> dict[str, Any] | None:
        """The stored run with these inputs, or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(runs.c.id, runs.c.kind).where(
                runs.c.input_hash == input_hash)).one_or_none()
        return None if row is None else self.get_run(row.kind, row.id)

    def get_run(self, kind: str, run_id: str) -> dict[str, Any] | None:
        """A run with the list of its files, or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(runs).where(runs.c.id == run_id,
                                                     runs.c.kind == kind)).one_or_none()
            if row is None:
                return None
            files = conn.execute(sa.select(run_files, blobs.c.size).join(blobs).where(
                run_files.c.run_id == run_id).order_by(run_files.c.role)).all()
        out = dict(row._mapping)
        out["files"] = [dict(f._mapping) for f in files]
        return out

    def list_runs(self, kind: str | None = None, *, limit: int = 100, offset: int = 0
                  ) -> tuple[list[dict[str, Any]], int]:
        """Runs (of a kind), newest first, without their payloads, and how many."""
        cols = [runs.c.id, runs.c.kind, runs.c.name, runs.c.created_at, runs.c.exit_code,
                runs.c.tripsim_version, runs.c.input_hash]
        where = [] if kind is None else [runs.c.kind == kind]
        with self._read() as conn:
            total = conn.execute(sa.select(sa.func.count()).select_from(runs).where(
                *where)).scalar_one()
            rows = conn.execute(sa.select(*cols).where(*where).order_by(
                runs.c.created_at.desc(), runs.c.id).limit(limit).offset(offset)).all()
        return [dict(r._mapping) for r in rows], int(total)

    def run_file(self, kind: str, run_id: str, role: str) -> dict[str, Any] | None:
        """One file of a run (its row: filename, media type, sha256), or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(run_files).join(runs).where(
                run_files.c.run_id == run_id, run_files.c.role == role,
                runs.c.kind == kind)).one_or_none()
        return None if row is None else dict(row._mapping)

    def delete_run(self, kind: str, run_id: str) -> bool:
        """Delete a run and the files no one else keeps."""
        with self.engine.begin() as conn:
            shas = set(conn.execute(sa.select(run_files.c.sha256).where(
                run_files.c.run_id == run_id)).scalars())
            gone = conn.execute(sa.delete(runs).where(runs.c.id == run_id,
                                                      runs.c.kind == kind)).rowcount
            if gone:
                conn.execute(sa.update(jobs).where(jobs.c.result_id == run_id).values(
                    result_id=None, message="its result was deleted"))
            self._drop_orphans(conn, shas)
        return bool(gone)

    # --- jobs -----------------------------------------------------------------------------

    def add_job(self, job_id: str, kind: str, request: dict[str, Any], owner: str, *,
                input_hash: str | None = None) -> dict[str, Any]:
        """A new queued job."""
        t = now()
        row = {"id": job_id, "kind": kind, "state": "queued", "progress": 0.0,
               "message": "queued", "input_hash": input_hash, "request": request,
               "owner": owner, "created_at": t, "heartbeat_at": t}
        with self.engine.begin() as conn:
            conn.execute(sa.insert(jobs).values(**row))
        return self.get_job(job_id)  # type: ignore[return-value]

    def update_job(self, job_id: str, *, only_active: bool = True, **values: Any) -> bool:
        """Change a job (by default only while it is queued or running)."""
        where = [jobs.c.id == job_id]
        if only_active:
            where.append(jobs.c.state.in_(ACTIVE))
        with self.engine.begin() as conn:
            n = conn.execute(sa.update(jobs).where(*where).values(heartbeat_at=now(),
                                                                  **values)).rowcount
        return bool(n)

    def get_job(self, job_id: str) -> dict[str, Any] | None:
        """A job, or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(jobs).where(jobs.c.id == job_id)).one_or_none()
        return None if row is None else dict(row._mapping)

    def active_job(self, input_hash: str) -> dict[str, Any] | None:
        """A queued or running job with these inputs, or None."""
        with self._read() as conn:
            row = conn.execute(sa.select(jobs.c.id).where(
                jobs.c.input_hash == input_hash, jobs.c.state.in_(ACTIVE))).first()
        return None if row is None else self.get_job(row.id)

    def list_jobs(self, *, state: str | None = None, limit: int = 100, offset: int = 0
                  ) -> tuple[list[dict[str, Any]], int]:
        """Jobs, newest first, and how many."""
        where = [] if state is None else [jobs.c.state == state]
        with self._read() as conn:
            total = conn.execute(sa.select(sa.func.count()).select_from(jobs).where(
                *where)).scalar_one()
            rows = conn.execute(sa.select(jobs).where(*where).order_by(
                jobs.c.created_at.desc(), jobs.c.id).limit(limit).offset(offset)).all()
        return [dict(r._mapping) for r in rows], int(total)

    def heartbeat(self, owner: str) -> None:
        """Mark this service's active jobs as still looked after."""
        with self.engine.begin() as conn:
            conn.execute(sa.update(jobs).where(jobs.c.owner == owner,
                                               jobs.c.state.in_(ACTIVE)).values(
                heartbeat_at=now()))

    def fail_lost_jobs(self, owner: str, *, stale_s: float,
                       dead_owner: Callable[[str], bool]) -> int:
        """Mark failed the active jobs of services that stopped (not lost silently).

        A job is lost when its service is gone (``dead_owner(owner)``: a process of
        this machine that no longer runs) or has not looked after it for ``stale_s``.
        """
        cutoff = now() - dt.timedelta(seconds=stale_s)
        with self.engine.begin() as conn:
            rows = conn.execute(sa.select(jobs.c.id, jobs.c.owner, jobs.c.heartbeat_at).where(
                jobs.c.state.in_(ACTIVE), jobs.c.owner != owner)).all()
            lost = [r.id for r in rows if dead_owner(r.owner) or r.heartbeat_at < cutoff]
            if lost:
                conn.execute(sa.update(jobs).where(jobs.c.id.in_(lost)).values(
                    state="failed", finished_at=now(), message="the service stopped before "
                    "the job finished", problem={
                        "type": "about:blank", "title": "Job lost", "status": 500,
                        "detail": "the service stopped before the job finished; submit it "
                                  "again"}))
        return len(lost)

    @contextlib.contextmanager
    def _read(self) -> Iterator[Connection]:
        """A connection for reading (on SQLite its transactions take no write lock)."""
        with self.engine.connect() as conn:
            yield conn.execution_options(tripsim_read=True)

    connection = _read


def _aware(t: dt.datetime) -> dt.datetime:
    """SQLite hands back naive times: they were stored in UTC."""
    return t if t.tzinfo is not None else t.replace(tzinfo=dt.UTC)
