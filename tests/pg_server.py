"""A throw-away PostgreSQL server for the tests and the benchmark.

Runs Debian's server programs (``/usr/lib/postgresql/<major>/bin``: ``initdb``, ``pg_ctl``) on
a temporary folder, listening on 127.0.0.1 only, on a free port. PostgreSQL refuses to run as
root, so as root the programs run as the unprivileged ``postgres`` user of the package
(``runuser``). The administrator connects by trust over the server's own Unix socket; the
application role the kit uses logs in over TCP with a password (scram-sha-256), read from a
password file given by ``PGPASSFILE``, never from the URL.

:meth:`TempPostgres.stop` always runs (fixture finalizer, ``atexit``), and a watcher process
stops the server when the test process dies without cleaning up (SIGKILL).

References: PostgreSQL 15 documentation, "initdb", "pg_ctl", "The pg_hba.conf File",
"The Password File", "Connections and Authentication" (listen_addresses, port,
unix_socket_directories).
"""

from __future__ import annotations

import atexit
import glob
import os
import secrets
import shutil
import socket
import subprocess
import sys
import tempfile
from pathlib import Path

ADMIN = "sweepbook_admin"
WRITER = "kit_writer"

_WATCHER = """
import subprocess, sys, shutil
sys.stdin.read()                      # EOF: the test process ended, one way or another
subprocess.run(sys.argv[1:-1], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
shutil.rmtree(sys.argv[-1], ignore_errors=True)
"""


def find_bindir() -> Path | None:
    """The folder of ``initdb`` and ``pg_ctl`` (newest major version), or None."""
    found = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"),
                   key=lambda p: int(Path(p).parts[-3]) if Path(p).parts[-3].isdigit() else 0)
    if found:
        return Path(found[-1]).parent
    exe = shutil.which("initdb")
    return Path(exe).parent if exe else None


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


class TempPostgres:
    """One server on a temporary folder; :meth:`start`, :meth:`stop`, databases on demand."""

    def __init__(self, bindir: Path, fsync: bool = False) -> None:
        self.bindir = bindir
        self.fsync = fsync
        self.root = Path(tempfile.mkdtemp(prefix="sweepbook-pg-"))
        os.chmod(self.root, 0o755)  # the postgres user must traverse it
        self.data = self.root / "data"
        self.sock = self.root / "sock"
        self.password = secrets.token_hex(16)
        self.passfile = self.root / "pgpass"
        self.port = 0
        self._as_root = os.geteuid() == 0
        self._watcher: subprocess.Popen | None = None
        self._n = 0

    # ---- running the programs
    def _cmd(self, *args: str) -> list[str]:
        cmd = [str(self.bindir / args[0]), *args[1:]]
        return ["runuser", "-u", "postgres", "--", *cmd] if self._as_root else cmd

    def _run(self, *args: str) -> None:
        out = subprocess.run(self._cmd(*args), capture_output=True, text=True, timeout=120)
        if out.returncode:
            log = self.root / "server.log"
            tail = log.read_text(errors="replace")[-2000:] if log.exists() else ""
            raise RuntimeError(f"{' '.join(args[:2])} failed: {out.stderr.strip()}\n{tail}")

    def start(self) -> "TempPostgres":
        for d in (self.data, self.sock):
            d.mkdir(mode=0o700)
            if self._as_root:
                shutil.chown(d, "postgres", "postgres")
        self._run("initdb", "-D", str(self.data), "-U", ADMIN, "-A", "trust", "-E", "UTF8",
                  "--no-instructions")
        (self.data / "pg_hba.conf").write_text(
            f"local all {ADMIN} trust\n"
            "host all all 127.0.0.1/32 scram-sha-256\n")
        self.passfile.write_text(f"127.0.0.1:*:*:{WRITER}:{self.password}\n")
        os.chmod(self.passfile, 0o600)
        for attempt in range(5):  # a port taken between the probe and the start: try another
            self.port = _free_port()
            with open(self.data / "postgresql.conf", "a") as conf:
                conf.write(f"\nlisten_addresses = '127.0.0.1'\nport = {self.port}\n"
                           f"unix_socket_directories = '{self.sock}'\n"
                           f"fsync = {'on' if self.fsync else 'off'}\nmax_connections = 60\n")
            try:
                self._run("pg_ctl", "-D", str(self.data), "-l", str(self.data / "server.log"),
                          "-w", "-t", "60", "start")
                break
            except RuntimeError:
                if attempt == 4:
                    raise
        self._watch()
        atexit.register(self.stop)
        with self.admin() as conn:
            from psycopg import sql

            conn.execute(sql.SQL("CREATE ROLE {} LOGIN PASSWORD {}").format(
                sql.Identifier(WRITER), sql.Literal(self.password)))
        return self

    def _watch(self) -> None:
        stop = self._cmd("pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")
        self._watcher = subprocess.Popen([sys.executable, "-c", _WATCHER, *stop, str(self.root)],
                                         stdin=subprocess.PIPE, start_new_session=True,
                                         stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)

    def stop(self) -> None:
        """Stop the server and remove its folder (safe to call twice)."""
        if self.data.exists():
            subprocess.run(self._cmd("pg_ctl", "-D", str(self.data), "-m", "fast", "-w", "stop"),
                           capture_output=True, timeout=120)
        if self._watcher is not None:
            self._watcher.stdin.close()
            self._watcher.wait(timeout=120)
            self._watcher = None
        shutil.rmtree(self.root, ignore_errors=True)

    def crash(self) -> None:
        """Stop the server at once, as if it went away (no clean shutdown)."""
        self._run("pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")

    def restart(self) -> None:
        """Start the server again after :meth:`crash`."""
        self._run("pg_ctl", "-D", str(self.data), "-l", str(self.data / "server.log"),
                  "-w", "-t", "60", "start")

    # ---- connections and databases
    def admin_dsn(self, dbname: str = "postgres") -> str:
        return f"host={self.sock} port={self.port} user={ADMIN} dbname={dbname}"

    def admin(self, dbname: str = "postgres"):
        import psycopg

        return psycopg.connect(self.admin_dsn(dbname), autocommit=True)

    def url(self, dbname: str, user: str = WRITER, query: str = "") -> str:
        return f"postgresql://{user}@127.0.0.1:{self.port}/{dbname}" + (f"?{query}" if query else "")

    def new_database(self, init: bool = True) -> str:
        """A new empty database; with ``init``, the review log is created by the owner and
        the writer role gets SELECT and INSERT only. Returns its name."""
        from kit.review.server import init_server

        self._n += 1
        name = f"review_{os.getpid()}_{self._n}"
        with self.admin() as conn:
            from psycopg import sql

            conn.execute(sql.SQL("CREATE DATABASE {}").format(sql.Identifier(name)))
        if init:
            # the owner (administrator) creates the schema over the socket, then grants
            admin_url = f"postgresql://{ADMIN}@/{name}?host={self.sock}&port={self.port}"
            init_server(admin_url, writer=WRITER)
        return name
