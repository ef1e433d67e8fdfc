"""A simulated balance: answers each request line with a print line of its profile.

It serves over a pseudo-terminal (POSIX: the path it prints is a serial port to any
program) or over a loopback TCP socket (everywhere; pyserial opens it as
``socket://127.0.0.1:PORT``). What it prints is chosen by ``mode``:

* ``stable``: the next mass of its list, marked stable, in grams;
* ``unstable``: the same, marked as still settling;
* ``wrong-unit``: the mass in another unit (``lb``);
* ``overload``: the profile's overload line;
* ``noisy``: a line of noise first, then the stable print line with stray bytes
  around it;
* ``silent``: nothing at all (the reader's time runs out).
"""

from __future__ import annotations

import os
import socket
import sys
import threading
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Self

from prepbook.devices.profiles import BalanceProfile
from prepbook.errors import InvalidInput

MODES = ("stable", "unstable", "wrong-unit", "overload", "noisy", "silent")
NOISE_LINE = b"\x00\x7f#*\x13\r\n"
NOISE_BEFORE = b"\x11\x00~"
NOISE_AFTER = b" \x13\x7f"


@dataclass
class SimulatedBalance:
    """The balance's state: profile, masses (g, as text, used in turn) and mode."""

    profile: BalanceProfile
    masses: Sequence[str] = ("39.1602",)
    mode: str = "stable"
    requests: int = 0
    _lock: threading.Lock = field(default_factory=threading.Lock, repr=False)

    def __post_init__(self) -> None:
        if self.mode not in MODES:
            raise InvalidInput(f"mode {self.mode!r} is not one of {', '.join(MODES)}")
        if not self.masses:
            raise InvalidInput("the simulated balance needs at least one mass")
        self.masses = tuple(self.masses)

    def set(self, *, mode: str | None = None, masses: Sequence[str] | None = None) -> None:
        """Change what the balance prints next (the demo and the tests use this)."""
        with self._lock:
            if mode is not None:
                if mode not in MODES:
                    raise InvalidInput(f"mode {mode!r} is not one of {', '.join(MODES)}")
                self.mode = mode
            if masses is not None:
                self.masses = tuple(masses)
                self.requests = 0

    def answer(self) -> bytes:
        """What the balance sends in answer to one request."""
        with self._lock:
            mass = self.masses[self.requests % len(self.masses)]
            self.requests += 1
            mode = self.mode
        p = self.profile
        if mode == "silent":
            return b""
        if mode == "overload":
            return p.overload_line.encode("latin-1") + b"\r\n"
        signed = mass if mass.startswith(("+", "-")) else "+" + mass
        mark = p.unstable_mark if mode == "unstable" else (p.stable[0] if p.stable else "")
        unit = "lb" if mode == "wrong-unit" else "g"
        line = p.print.format(mark=mark, value=signed.lstrip("+"), signed=signed,
                              unit=unit).encode("latin-1")
        if mode == "noisy":
            return NOISE_LINE + NOISE_BEFORE + line + NOISE_AFTER + b"\r\n"
        return line + b"\r\n"


class _LineServer:
    """Reads request lines from one byte stream and writes the balance's answers."""

    url: str  # what pyserial opens

    def __init__(self, balance: SimulatedBalance) -> None:
        self.balance = balance
        self.stopping = threading.Event()
        self.thread = threading.Thread(target=self._serve, name="simulated-balance",
                                       daemon=True)

    def _serve(self) -> None:
        raise NotImplementedError

    def _close(self) -> None:
        raise NotImplementedError

    def start(self) -> Self:
        self.thread.start()
        return self

    def stop(self) -> None:
        self.stopping.set()
        self.thread.join(timeout=2)
        self._close()

    def answer_lines(self, data: bytes, pending: bytes) -> tuple[bytes, bytes]:
        """(the answers to every complete line in ``pending + data``, what is left)."""
        pending += data
        out = b""
        while b"\n" in pending:
            _, _, pending = pending.partition(b"\n")
            out += self.balance.answer()
        return out, pending


class SocketServer(_LineServer):
    """The balance on a loopback TCP port, one client at a time."""

    def __init__(self, balance: SimulatedBalance, port: int = 0) -> None:
        super().__init__(balance)
        self.listener = socket.create_server(("127.0.0.1", port))
        self.listener.settimeout(0.2)
        self.port = self.listener.getsockname()[1]
        self.url = f"socket://127.0.0.1:{self.port}"

    def _serve(self) -> None:
        while not self.stopping.is_set():
            try:
                conn, _ = self.listener.accept()
            except TimeoutError:
                continue
            except OSError:
                return
            with conn:
                conn.settimeout(0.2)
                pending = b""
                while not self.stopping.is_set():
                    try:
                        data = conn.recv(256)
                    except TimeoutError:
                        continue
                    except OSError:
                        break
                    if not data:
                        break
                    out, pending = self.answer_lines(data, pending)
                    if out:
                        try:
                            conn.sendall(out)
                        except OSError:
                            break

    def _close(self) -> None:
        self.listener.close()


class PtyServer(_LineServer):
    """The balance behind a pseudo-terminal (POSIX only): ``path`` is its serial port."""

    def __init__(self, balance: SimulatedBalance) -> None:
        if sys.platform == "win32":
            raise InvalidInput("a pseudo-terminal needs Linux or macOS; use a socket port "
                               "(--port 0) on Windows")
        import tty

        super().__init__(balance)
        self.master, self.slave = os.openpty()
        tty.setraw(self.slave)  # no echo and no line editing: bytes pass as they are
        self.path = os.ttyname(self.slave)
        self.url = self.path

    def _serve(self) -> None:
        import select

        pending = b""
        while not self.stopping.is_set():
            ready, _, _ = select.select([self.master], [], [], 0.2)
            if not ready:
                continue
            try:
                data = os.read(self.master, 256)
            except OSError:
                return
            out, pending = self.answer_lines(data, pending)
            if out:
                os.write(self.master, out)

    def _close(self) -> None:
        os.close(self.master)
        os.close(self.slave)
