"""A throw-away PostgreSQL server for the tests and the benchmark.

``PgServer`` runs Debian's (or any) PostgreSQL server binaries — initdb, pg_ctl,
postgres — in a fresh temporary folder, listening only on a Unix socket inside that
folder (no TCP port, so nothing else on the machine can reach it and two runs never
collide), and removes it all on ``stop``. The server refuses to run as root, so when the
tests run as root it runs as the ``postgres`` system user (or ``nobody``).

The binaries are looked for in ``$WORKPACK_PG_BIN``, then ``/usr/lib/postgresql/*/bin``
(newest first), then ``pg_config --bindir``, then PATH.
"""

from __future__ import annotations

import contextlib
import os
import pwd
import shutil
import subprocess
import tempfile
from collections.abc import Iterator
from pathlib import Path
from urllib.parse import quote

PORT = 5432  # only names the socket file inside our own folder
ADMIN = "workpack_admin"  # the server's superuser in these tests


def find_bindir() -> Path | None:
    """The folder holding initdb, pg_ctl and postgres, or None on a machine without them."""
    candidates: list[Path] = []
    if os.environ.get("WORKPACK_PG_BIN"):
        candidates.append(Path(os.environ["WORKPACK_PG_BIN"]))
    candidates += sorted(Path("/usr/lib/postgresql").glob("*/bin"),
                         key=lambda p: int(p.parent.name) if p.parent.name.isdigit() else 0,
                         reverse=True)
    with contextlib.suppress(OSError, subprocess.SubprocessError):
        out = subprocess.run(["pg_config", "--bindir"], capture_output=True, text=True,
                             timeout=10, check=True).stdout.strip()
        candidates.append(Path(out))
    if shutil.which("initdb"):
        candidates.append(Path(shutil.which("initdb") or "").parent)
    for folder in candidates:
        if all((folder / name).is_file() for name in ("initdb", "pg_ctl", "postgres")):
            return folder
    return None


def _server_user() -> pwd.struct_passwd | None:
    """The unprivileged user to run the server as, or None to run it as ourselves."""
    if os.geteuid() != 0:
        return None
    for name in ("postgres", "nobody"):
        with contextlib.suppress(KeyError):
            return pwd.getpwnam(name)
    raise RuntimeError("running as root and neither a 'postgres' nor a 'nobody' user exists "
                       "to run the PostgreSQL server as")


class PgServer:
    """One private PostgreSQL server; ``durable=False`` skips fsync (tests, not the bench)."""

    def __init__(self, bindir: Path, *, durable: bool = False):
        self.bindir = bindir
        self.durable = durable
        self.root = Path(tempfile.mkdtemp(prefix="wp-pg-"))  # short: socket paths are limited
        self.data = self.root / "data"
        self.log = self.root / "server.log"
        self._user = _server_user()
        self._running = False

    def _run(self, *args: str) -> None:
        kwargs: dict = {}
        if self._user is not None:
            kwargs = {"user": self._user.pw_uid, "group": self._user.pw_gid, "extra_groups": []}
        env = {**os.environ, "LC_ALL": "C.UTF-8", "LANG": "C.UTF-8"}
        result = subprocess.run([str(self.bindir / args[0]), *args[1:]], capture_output=True,
                                text=True, env=env, cwd=self.root, timeout=120, **kwargs)
        if result.returncode != 0:
            log = self.log.read_text(errors="replace")[-3000:] if self.log.exists() else ""
            raise RuntimeError(f"{args[0]} failed ({result.returncode}):\n{result.stdout}\n"
                               f"{result.stderr}\n{log}")

    def start(self) -> PgServer:
        if self._user is not None:
            os.chown(self.root, self._user.pw_uid, self._user.pw_gid)
        self.root.chmod(0o755)
        self._run("initdb", "-D", str(self.data), "-U", ADMIN, "--auth=trust",
                  "--encoding=UTF8", "--locale=C.UTF-8", "--no-sync")
        options = [f"-k {self.root}", "-c listen_addresses=''", f"-p {PORT}",
                   "-c max_connections=60", "-c shared_buffers=64MB"]
        if not self.durable:
            options += ["-c fsync=off", "-c full_page_writes=off"]
        self._run("pg_ctl", "-D", str(self.data), "-l", str(self.log), "-w", "-t", "60",
                  "-o", " ".join(options), "start")
        self._running = True
        return self

    def url(self, database: str = "postgres", user: str = ADMIN) -> str:
        return (f"postgresql://{quote(user)}@/{quote(database)}?host={quote(str(self.root))}"
                f"&port={PORT}")

    def create_database(self, name: str, template: str | None = None) -> str:
        """A new database (optionally a copy of ``template``); returns its admin URL."""
        import psycopg
        from psycopg import sql

        with psycopg.connect(self.url(), autocommit=True) as conn:
            statement = sql.SQL("CREATE DATABASE {} ENCODING 'UTF8'").format(
                sql.Identifier(name))
            if template is not None:
                statement = sql.SQL("{} TEMPLATE {}").format(statement,
                                                             sql.Identifier(template))
            conn.execute(statement)
        return self.url(name)

    def create_login_role(self, name: str) -> None:
        import psycopg
        from psycopg import sql

        with psycopg.connect(self.url(), autocommit=True) as conn:
            exists = conn.execute("SELECT 1 FROM pg_roles WHERE rolname = %s", (name,))
            if exists.fetchone() is None:
                conn.execute(sql.SQL("CREATE ROLE {} LOGIN").format(sql.Identifier(name)))

    def stop(self) -> None:
        try:
            if self._running:
                self._run("pg_ctl", "-D", str(self.data), "-m", "fast", "-w", "stop")
                self._running = False
        finally:
            shutil.rmtree(self.root, ignore_errors=True)


@contextlib.contextmanager
def running_server(bindir: Path, *, durable: bool = False) -> Iterator[PgServer]:
    """A started server, stopped and removed on the way out, whatever happened."""
    server = PgServer(bindir, durable=durable)
    try:
        yield server.start()
    finally:
        server.stop()
