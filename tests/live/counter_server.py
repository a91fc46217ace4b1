"""A simulated SCPI counter on 127.0.0.1 for the capture tests (an invented instrument).

It answers ``*IDN?``, takes setup commands, answers setup queries, and answers
the reading query with plausible 10 MHz frequency readings (seeded white
frequency noise of 1e-11), keeping a list of every reading it sent. Scripted
faults: the connection is dropped (closed without an answer) when chosen
readings are asked for, and chosen readings are answered with an SCPI error
string instead of a number.
"""

from __future__ import annotations

import socket
import socketserver
import threading

import numpy as np

IDENTITY = "Invented Instruments,TIC-1,SN0001,1.0"


class CounterServer:
    def __init__(self, *, drop_at=(), error_at=(), silent=False, seed=3):
        self.drop_at = set(drop_at)  # query numbers (from 0) at which the connection drops
        self.error_at = set(error_at)
        self.silent = silent  # never answer (for timeouts)
        self.rng = np.random.default_rng(seed)
        self.sent: list[str] = []  # readings answered, in order
        self.commands: list[str] = []
        self.connections = 0
        self.queries = 0
        self.lock = threading.Lock()
        server = self

        class Handler(socketserver.StreamRequestHandler):
            def handle(self) -> None:
                with server.lock:
                    server.connections += 1
                for raw in self.rfile:
                    command = raw.decode("ascii").strip()
                    with server.lock:
                        server.commands.append(command)
                    answer = server.answer(command)
                    if answer is None:
                        continue
                    if answer is DROP:
                        self.request.shutdown(socket.SHUT_RDWR)
                        return
                    self.wfile.write(answer.encode("ascii") + b"\n")

        self._server = socketserver.ThreadingTCPServer(("127.0.0.1", 0), Handler)
        self._server.daemon_threads = True
        self.port = self._server.server_address[1]
        self._thread = threading.Thread(target=self._server.serve_forever, daemon=True)

    def answer(self, command: str):
        if self.silent:
            return None
        if command == "*IDN?":
            return IDENTITY
        if command == "MEAS:FREQ?":
            with self.lock:
                n = self.queries
                self.queries += 1
                if n in self.drop_at:
                    return DROP
                if n in self.error_at:
                    return '-230,"Data corrupt or stale"'
                value = f"{10e6 * (1 + 1e-11 * self.rng.standard_normal()):+.12E}"
                self.sent.append(value)
                return value
        if command.endswith("?"):
            return "1"
        return None

    def __enter__(self) -> CounterServer:
        self._thread.start()
        return self

    def __exit__(self, *exc) -> None:
        self._server.shutdown()
        self._server.server_close()


DROP = object()
