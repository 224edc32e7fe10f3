"""A throw-away PostgreSQL server on 127.0.0.1 for the store tests (session scope).

Uses the system's PostgreSQL binaries (initdb, pg_ctl; .ci/run installs Debian's
``postgresql`` package when they are missing). initdb refuses to run as root, so
under root the server runs as the unprivileged ``postgres`` user, in a temporary
directory, on a free loopback port, with trust authentication; it is stopped and
removed at the end of the session.
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path

import pytest


def _binaries() -> Path | None:
    found = shutil.which("initdb")
    if found and shutil.which("pg_ctl"):
        return Path(found).parent
    for d in sorted(glob.glob("/usr/lib/postgresql/*/bin"), reverse=True):
        if os.path.exists(os.path.join(d, "initdb")):
            return Path(d)
    return None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _run_as(user: str | None, argv: list[str]) -> subprocess.CompletedProcess:
    if user:
        argv = ["runuser", "-u", user, "--", *argv]
    return subprocess.run(argv, capture_output=True, text=True, timeout=120)


@pytest.fixture(scope="session")
def postgres_url():
    """URL of a fresh database on a private PostgreSQL server; skips when none can be started."""
    bindir = _binaries()
    if bindir is None:
        pytest.skip("PostgreSQL binaries (initdb, pg_ctl) are not installed; .ci/run installs them")
    try:
        import psycopg
    except ImportError:
        pytest.skip("psycopg is not installed (pip install '.[postgres]')")
    user = None
    if os.geteuid() == 0:
        try:
            pwd.getpwnam("postgres")
            user = "postgres"
        except KeyError:
            pytest.skip("running as root and no unprivileged 'postgres' user exists to run the server")
    root = Path(tempfile.mkdtemp(prefix="lensmass-pg-"))
    data, sock = root / "data", root / "sock"
    sock.mkdir()
    if user:
        pw = pwd.getpwnam(user)
        for p in (root, sock):
            os.chown(p, pw.pw_uid, pw.pw_gid)
    port = _free_port()
    try:
        r = _run_as(user, [str(bindir / "initdb"), "-D", str(data), "-A", "trust", "-U", "lensmass",
                           "--no-sync", "-E", "UTF8"])
        if r.returncode:
            pytest.fail(f"initdb failed: {r.stderr.strip()[-500:]}")
        opts = f"-p {port} -h 127.0.0.1 -k {sock} -F -c fsync=off"
        r = _run_as(user, [str(bindir / "pg_ctl"), "-D", str(data), "-o", opts, "-l", str(root / "log"),
                           "-w", "-t", "60", "start"])
        if r.returncode:
            log = (root / "log").read_text() if (root / "log").exists() else ""
            pytest.fail(f"pg_ctl start failed: {r.stderr.strip()[-300:]} {log[-500:]}")
        with psycopg.connect(f"postgresql://lensmass@127.0.0.1:{port}/postgres", autocommit=True) as conn:
            conn.execute("CREATE DATABASE lensmass_test")
        yield f"postgresql://lensmass@127.0.0.1:{port}/lensmass_test"
    finally:
        if data.exists():
            _run_as(user, [str(bindir / "pg_ctl"), "-D", str(data), "-m", "immediate", "-w", "stop"])
        shutil.rmtree(root, ignore_errors=True)
