"""Slow clients against a real server (api/http/server_timeouts.py, api/http/body_limit.py): a
connection whose headers never finish is closed after RIGBENCH_HEADER_TIMEOUT_S; a body that does
not arrive within RIGBENCH_BODY_TIMEOUT_S is a 408."""

from __future__ import annotations

import socket
import time

import pytest

from servers import HOST, Server, database

pytestmark = pytest.mark.slow

TIMEOUTS = {"RIGBENCH_HEADER_TIMEOUT_S": "1", "RIGBENCH_BODY_TIMEOUT_S": "1"}


def read_all(s: socket.socket, wait_s: float) -> bytes:
    s.settimeout(wait_s)
    chunks = []
    try:
        while chunk := s.recv(65536):
            chunks.append(chunk)
    except TimeoutError:
        pass
    return b"".join(chunks)


def test_slow_headers_are_cut_off_and_slow_bodies_get_408(tmp_path):
    with database("sqlite", tmp_path) as data, Server(data.url, tmp_path, env=TIMEOUTS) as server:
        with socket.create_connection((HOST, server.port)) as s:
            s.sendall(b"GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Slow: ")  # never finished
            start = time.monotonic()
            assert read_all(s, 10) == b""  # closed by the server, no answer
            assert time.monotonic() - start < 5
        with socket.create_connection((HOST, server.port)) as s:
            s.sendall(b"POST /v1/comparisons HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/json\r\n"
                      b"Content-Length: 500\r\n\r\n{\"rigs\": [")  # 490 bytes still to come, never sent
            answer = read_all(s, 5)
            assert answer.startswith(b"HTTP/1.1 408"), answer[:200]
        with socket.create_connection((HOST, server.port)) as s:  # a prompt client is served
            s.sendall(b"GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n")
            assert read_all(s, 5).startswith(b"HTTP/1.1 200")
