"""An unexpected error is answered in words and the connection stays open: a real uvicorn in
a thread, two requests on one socket (HTTP/1.1 keep-alive)."""

import socket
import threading
import time

import pytest
import uvicorn

from server.app import create_app
from tests.conftest import app_settings
from tests.liveserver import free_port

pytestmark = pytest.mark.slow


def _read_response(sock) -> tuple[int, bytes, bytes]:
    data = b""
    while b"\r\n\r\n" not in data:
        data += sock.recv(65536)
    head, _, body = data.partition(b"\r\n\r\n")
    length = int(next(line.split(b":")[1] for line in head.split(b"\r\n") if line.lower().startswith(b"content-length")))
    while len(body) < length:
        body += sock.recv(65536)
    return int(head.split(b" ")[1]), body[:length], head.lower()


def test_after_an_unexpected_error_the_same_connection_answers_the_next_request(tmp_path):
    app = create_app(app_settings(tmp_path))

    def broken():
        raise RuntimeError("a fault the tests plant")

    app.add_api_route("/api/v1/planted-fault", broken)
    port = free_port()
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="critical"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    try:
        for _ in range(100):
            if server.started:
                break
            time.sleep(0.05)
        with socket.create_connection(("127.0.0.1", port), timeout=10) as sock:
            sock.sendall(b"GET /api/v1/planted-fault HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
            status, body, head = _read_response(sock)
            assert status == 500 and b"internal error" in body and b"RuntimeError" not in body
            assert b"content-security-policy: default-src 'self'" in head  # the safe headers on a 500 too
            sock.sendall(b"GET /api/v1/scenarios HTTP/1.1\r\nHost: 127.0.0.1\r\n\r\n")
            status, body, _ = _read_response(sock)
            assert status == 200 and b'"items"' in body
    finally:
        server.should_exit = True
        thread.join(10)
