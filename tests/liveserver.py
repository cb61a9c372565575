"""A real uvicorn server on 127.0.0.1 in a child process, for browser and reliability tests."""

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class LiveServer:
    """uvicorn with the app factory; the database and demo folder are the test's, whatever
    PRESSCYCLE_* the surrounding environment exports."""

    def __init__(self, db: Path | str, port: int | None = None, demo_dir: Path = ROOT / "demo_cases",
                 log_dir: Path | None = None):
        # an SQLite file, or a postgresql:// URL (then log_dir says where the log goes)
        self.db = db if isinstance(db, str) and "://" in db else Path(db)
        self.log_dir = Path(log_dir) if log_dir else None
        self.demo_dir = Path(demo_dir)
        self.port = port or free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.proc = None

    def start(self, wait: bool = True, timeout: float = 30.0) -> "LiveServer":
        env = {k: v for k, v in os.environ.items() if not k.startswith("PRESSCYCLE_")}
        env.update(PRESSCYCLE_DB=str(self.db), PRESSCYCLE_DEMO_DIR=str(self.demo_dir))
        # output goes to a file: a pipe nobody reads would stall a chatty server
        self.log = (self.log_dir / f"server.{self.port}.log" if self.log_dir
                    else self.db.with_suffix(f".{self.port}.log"))
        self._log_file = open(self.log, "ab")  # noqa: SIM115 (closed in stop/kill)
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "uvicorn", "--factory", "server.app:create_app", "--host", "127.0.0.1", "--port", str(self.port),
             "--log-level", "warning"],
            cwd=ROOT, env=env, stdout=self._log_file, stderr=subprocess.STDOUT,
        )
        if wait:
            deadline = time.time() + timeout
            while time.time() < deadline:
                if self.proc.poll() is not None:
                    raise RuntimeError(f"uvicorn exited: {self.output()}")
                try:
                    socket.create_connection(("127.0.0.1", self.port), timeout=0.5).close()
                    return self
                except OSError:
                    time.sleep(0.1)
            self.kill()
            raise RuntimeError("uvicorn did not start")
        return self

    def output(self) -> str:
        return self.log.read_text(errors="replace") if self.proc else ""

    def stop(self, timeout: float = 15.0) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        self._close()

    def kill(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait()
        self._close()

    def _close(self) -> None:
        if getattr(self, "_log_file", None) is not None:
            self._log_file.close()
            self._log_file = None
