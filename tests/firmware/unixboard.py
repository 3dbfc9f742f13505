"""The MicroPython unix port behind a pseudo-terminal, dressed as a board (POSIX only).

`UnixBoard(image)` runs `micropython -i unix/boot_shim.py IMAGE MACHINE_PY` with its stdin and
stdout on one pty, and relays that pty to a second one whose path (`.path`) the host opens like a serial
port: the host gets a real device path, the interpreter a real terminal. The file IMAGE holds
the board's flash, a littlefs v2 volume mounted at "/"; `/lib/machine.py` there is the fake
`machine` (tests/firmware/fakes; the unix port has none). When the interpreter exits (Ctrl-D at the REPL: a soft reset) it is started
again and runs `main.py` if there is one, as a board does after a reset.
"""

from __future__ import annotations

import os
import select
import subprocess
import threading
import tty
from pathlib import Path

from unixport import HERE, need_micropython

SHIM = HERE / "unix" / "boot_shim.py"
FAKE_MACHINE = HERE / "fakes" / "machine.py"


class UnixBoard:
    def __init__(self, image: Path, exe: str | None = None):
        self.image = Path(image)
        self.exe = exe or need_micropython()
        self.m1, self.s1 = os.openpty()  # the interpreter's terminal
        self.m2, self.s2 = os.openpty()  # the host's "serial port"
        tty.setraw(self.s1)
        tty.setraw(self.s2)
        self.path = os.ttyname(self.s2)
        self.starts = 0
        self.proc: subprocess.Popen | None = None
        self._stop = threading.Event()
        self._threads = [
            threading.Thread(target=self._supervise, daemon=True),
            threading.Thread(target=self._relay, daemon=True),
        ]

    def __enter__(self) -> UnixBoard:
        for t in self._threads:
            t.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _supervise(self) -> None:
        while not self._stop.is_set():
            self.proc = subprocess.Popen(
                [self.exe, "-i", str(SHIM), str(self.image), str(FAKE_MACHINE)],
                stdin=self.s1,
                stdout=self.s1,
                stderr=self.s1,
                close_fds=True,
            )
            self.starts += 1
            while self.proc.poll() is None and not self._stop.is_set():
                self._stop.wait(0.05)

    def _relay(self) -> None:
        while not self._stop.is_set():
            r, _, _ = select.select([self.m1, self.m2], [], [], 0.05)
            for fd in r:
                try:
                    data = os.read(fd, 4096)
                except OSError:
                    continue
                os.write(self.m2 if fd == self.m1 else self.m1, data)

    def close(self) -> None:
        self._stop.set()
        if self.proc is not None and self.proc.poll() is None:
            self.proc.kill()
            self.proc.wait(timeout=10)
        for t in self._threads:
            if t.is_alive():
                t.join(timeout=5)
        for fd in (self.m1, self.s1, self.m2, self.s2):
            try:
                os.close(fd)
            except OSError:
                pass
