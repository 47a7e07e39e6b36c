"""A TCP relay in a process of its own, so a test can freeze it (SIGSTOP) and thaw it
(SIGCONT): the link to the database then stays open, the kernel still acknowledges
every byte, and nothing comes back, as with a hung proxy or a half-dead network path.

    python -m tests.tcp_relay TARGET_HOST TARGET_PORT

prints the port it listens on (127.0.0.1), then relays every connection to the target.
`FreezableRelay` starts one and stops only the process it started.
"""
from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import threading

from tests.live_server import REPO


def pump(source: socket.socket, sink: socket.socket) -> None:
    """Copy from `source` to `sink` until either side closes."""
    try:
        while data := source.recv(65536):
            sink.sendall(data)
    except OSError:
        pass
    finally:
        for sock in (source, sink):
            try:
                sock.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass


def relay(target_host: str, target_port: int) -> None:
    listener = socket.create_server(("127.0.0.1", 0), backlog=64)
    print(listener.getsockname()[1], flush=True)
    while True:
        client, _ = listener.accept()
        try:
            upstream = socket.create_connection((target_host, target_port), timeout=10)
        except OSError:
            client.close()
            continue
        upstream.settimeout(None)
        for source, sink in ((client, upstream), (upstream, client)):
            threading.Thread(target=pump, args=(source, sink), daemon=True).start()


class FreezableRelay:
    def __init__(self, target_host: str, target_port: int) -> None:
        self.process = subprocess.Popen([sys.executable, "-m", "tests.tcp_relay", target_host, str(target_port)],
                                        cwd=REPO, stdout=subprocess.PIPE, text=True)
        self.port = int(self.process.stdout.readline())

    def freeze(self) -> None:
        os.kill(self.process.pid, signal.SIGSTOP)

    def thaw(self) -> None:
        os.kill(self.process.pid, signal.SIGCONT)

    def stop(self) -> None:
        if self.process.poll() is None:
            self.thaw()
            self.process.terminate()
            self.process.wait(timeout=10)


if __name__ == "__main__":
    relay(sys.argv[1], int(sys.argv[2]))
