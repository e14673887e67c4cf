"""Shared fixtures: a throwaway PostgreSQL server, and label-store URLs for both back ends.

The PostgreSQL server is started once per test session on a free port of 127.0.0.1 from
Debian's PostgreSQL 15 binaries, and stopped at the end of the session even when tests fail.
Without the binaries the PostgreSQL variants are skipped, except under ``CI=true`` where a
missing server is a failure (CI installs the binaries, so nothing may silently skip there).
"""

from __future__ import annotations

import contextlib
import os
import shlex
import shutil
import socket
import subprocess
import tempfile
import uuid
from pathlib import Path

import pytest

PG_BIN = Path("/usr/lib/postgresql/15/bin")


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def _as_postgres(args: list[str]) -> subprocess.CompletedProcess:
    # The server refuses to run as root; CI runs as root, so switch to the `postgres` user.
    if os.geteuid() == 0:
        cmd = ["su", "postgres", "-s", "/bin/sh", "-c", shlex.join(args)]
    else:
        cmd = args
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120)


def _missing_postgres(reason: str):
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(f"PostgreSQL is required in CI but {reason}. Install Debian's `postgresql`.")
    pytest.skip(f"PostgreSQL variant skipped: {reason}")


@pytest.fixture(scope="session")
def postgres_server():
    """URL (without database) of a throwaway PostgreSQL 15 server, or skip when absent."""
    if not (PG_BIN / "pg_ctl").exists():
        _missing_postgres(f"no binaries under {PG_BIN}")
    root = Path(tempfile.mkdtemp(prefix="tm_compare_pg_"))
    port = _free_port()
    data, log = root / "data", root / "server.log"
    if os.geteuid() == 0:
        shutil.chown(root, "postgres", "postgres")
    # --no-locale: a C locale always exists, whatever LANG the machine has; UTF8 stores any text.
    init = _as_postgres(
        [
            str(PG_BIN / "initdb"),
            "-D",
            str(data),
            "-A",
            "trust",
            "-U",
            "postgres",
            "--no-locale",
            "-E",
            "UTF8",
        ]
    )
    if init.returncode != 0:
        shutil.rmtree(root, ignore_errors=True)
        _missing_postgres(f"initdb failed: {init.stderr.strip()[-500:]}")
    options = f"-p {port} -k {root} -c listen_addresses=127.0.0.1 -c fsync=off"
    start = _as_postgres(
        [str(PG_BIN / "pg_ctl"), "-D", str(data), "-o", options, "-l", str(log), "start", "-w"]
    )
    try:
        if start.returncode != 0:
            detail = log.read_text() if log.exists() else start.stderr
            _missing_postgres(f"the server did not start: {detail.strip()[-500:]}")
        yield f"postgresql+psycopg://postgres@127.0.0.1:{port}"
    finally:
        _as_postgres([str(PG_BIN / "pg_ctl"), "-D", str(data), "stop", "-m", "fast"])
        shutil.rmtree(root, ignore_errors=True)


@pytest.fixture
def postgres_database(postgres_server):
    """URL of a fresh, empty schema on the session's server (cheaper than a database per test);
    the URL selects it through the connection's ``search_path``. Dropped after the test."""
    import psycopg

    name = f"t_{uuid.uuid4().hex[:12]}"
    admin = postgres_server.replace("postgresql+psycopg", "postgresql") + "/postgres"
    with psycopg.connect(admin, autocommit=True) as conn:
        conn.execute(f'CREATE SCHEMA "{name}"')
    yield f"{postgres_server}/postgres?options=-csearch_path%3D{name}"
    with psycopg.connect(admin, autocommit=True) as conn, contextlib.suppress(psycopg.Error):
        conn.execute(f'DROP SCHEMA "{name}" CASCADE')


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def store_url(request, tmp_path):
    """A URL of a fresh, empty label store: an SQLite file, then a PostgreSQL database."""
    if request.param == "sqlite":
        return str(tmp_path / "labels.sqlite")
    return request.getfixturevalue("postgres_database")
