"""A throwaway PostgreSQL server for the tests and the store benchmark.

``initdb`` in a temporary folder, a Unix socket in that folder (no TCP), a random port (it
names the socket), stopped and removed at the end. PostgreSQL refuses to run as root: as
root the server runs as the ``postgres`` user (made by Debian's package) or ``nobody``, through
``runuser``. Debian keeps the binaries in /usr/lib/postgresql/<version>/bin, not always on PATH.
"""

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
from pathlib import Path

#: a role that must give its password (the start-up error tests); every other role is trusted
PASSWORD_ROLE, PASSWORD = "presscycle_pw", "right-password"


def binaries() -> Path | None:
    """The folder of initdb and pg_ctl, or None when PostgreSQL is not installed."""
    found = shutil.which("initdb")
    if found and shutil.which("pg_ctl"):
        return Path(found).resolve().parent
    versions = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"),
                      key=lambda p: int(Path(p).parent.parent.name) if Path(p).parent.parent.name.isdigit() else 0)
    return Path(versions[-1]).parent if versions else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class PgServer:
    def __init__(self):
        self.bin = binaries()
        if self.bin is None:
            raise FileNotFoundError("PostgreSQL's initdb and pg_ctl were not found (Debian package postgresql)")
        self.folder = Path(tempfile.mkdtemp(prefix="presscycle-pg-"))
        self.data = self.folder / "data"
        self.port = _free_port()
        self.user = None
        if os.geteuid() == 0:
            self.user = "postgres" if _exists("postgres") else "nobody"
            entry = pwd.getpwnam(self.user)
            os.chown(self.folder, entry.pw_uid, entry.pw_gid)
        self._run("initdb", "-D", str(self.data), "-A", "trust", "-U", "postgres", "-E", "UTF8", "--locale=C",
                  "--no-sync", "--no-instructions")
        hba = self.data / "pg_hba.conf"
        hba.write_text(f"local all {PASSWORD_ROLE} scram-sha-256\nlocal all all trust\n")
        options = (f"-k {self.folder} -p {self.port} -c listen_addresses='' -c fsync=off -c full_page_writes=off "
                   f"-c synchronous_commit=off -c max_connections=200")
        try:
            self._run("pg_ctl", "-D", str(self.data), "-l", str(self.folder / "log"), "-o", options, "-w",
                      "-t", "60", "start")
        except subprocess.CalledProcessError:
            log = self.folder / "log"
            raise RuntimeError("PostgreSQL did not start: " + (log.read_text()[-2000:] if log.exists() else "")) \
                from None
        self.admin(f"CREATE ROLE {PASSWORD_ROLE} LOGIN PASSWORD '{PASSWORD}'")

    def _run(self, tool: str, *args: str) -> None:
        command = [str(self.bin / tool), *args]
        if self.user:
            command = ["runuser", "-u", self.user, "--", *command]
        subprocess.run(command, check=True, capture_output=True, timeout=120, cwd=self.folder)

    def url(self, dbname: str = "postgres", user: str = "postgres", password: str | None = None) -> str:
        auth = f"{user}:{password}" if password is not None else user
        return f"postgresql://{auth}@/{dbname}?host={self.folder}&port={self.port}"

    def admin(self, sql: str, dbname: str = "postgres"):
        import psycopg

        with psycopg.connect(self.url(dbname), autocommit=True) as conn:
            cur = conn.execute(sql)
            return cur.fetchall() if cur.description else None

    def new_database(self, name: str, owner: str = "postgres") -> str:
        """A fresh, empty database; its URL."""
        self.admin(f'CREATE DATABASE "{name}" OWNER {owner}')
        return self.url(name)

    def stop(self) -> None:
        try:
            self._run("pg_ctl", "-D", str(self.data), "-m", "immediate", "-w", "stop")
        except subprocess.CalledProcessError:
            pass
        shutil.rmtree(self.folder, ignore_errors=True)


def _exists(user: str) -> bool:
    try:
        pwd.getpwnam(user)
        return True
    except KeyError:
        return False
