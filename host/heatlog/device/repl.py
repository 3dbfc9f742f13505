"""A board's raw REPL, through `mpremote` used as a library (PyPI, MicroPython's own tool).

mpremote 1.29 opens the port with ``serial.serial_for_url`` (so paths, ptys and pyserial URLs all
work) and tolerates a pty that refuses RTS/DTR, so no raw-REPL client of our own is needed: this
module only adds what heatlog needs on top (board facts, hashing with a read-back fallback,
atomic writes, soft reset) and turns mpremote's errors into :class:`~heatlog.errors.LinkError`.
Everything sent to the board is code we write here; values from the board are parsed with
``ast.literal_eval`` (plain literals only), never evaluated.
"""

from __future__ import annotations

import ast
import hashlib
import time
from dataclasses import dataclass
from typing import Any

from heatlog.errors import LinkError


class ReplError(LinkError):
    """The board's REPL did not answer, or code run there failed."""


@dataclass(frozen=True)
class BoardFacts:
    """What the board's MicroPython says about itself."""

    name: str  # sys.implementation.name
    version: tuple[int, ...]  # sys.implementation.version (numbers only)
    mpy: int | None  # sys.implementation._mpy: bytecode version | sub-version << 8 | arch << 10
    platform: str  # sys.platform: rp2, esp32, linux...
    hashlib: bool  # hashlib.sha256 present on the board

    @property
    def mpy_version(self) -> tuple[int, int] | None:
        """(bytecode version, sub-version) the board loads, or None if it does not say."""
        if self.mpy is None:
            return None
        return self.mpy & 0xFF, (self.mpy >> 8) & 3

    def to_dict(self) -> dict[str, Any]:
        return {
            "implementation": self.name,
            "version": ".".join(str(v) for v in self.version),
            "mpy_version": ".".join(map(str, self.mpy_version)) if self.mpy_version else None,
            "platform": self.platform,
            "hashlib": self.hashlib,
        }


_FACTS = (
    "import sys\n"
    "try:\n import hashlib\n h = hasattr(hashlib, 'sha256')\nexcept ImportError:\n h = False\n"
    "v = tuple(x for x in sys.implementation.version if isinstance(x, int))\n"
    "print(repr((sys.implementation.name, v, getattr(sys.implementation, '_mpy', None),"
    " sys.platform, h)))\n"
)


def _literal(out: bytes, what: str) -> Any:
    try:
        return ast.literal_eval(out.decode("utf-8", "replace").strip())
    except (ValueError, SyntaxError):
        raise ReplError(f"{what}: the board's answer is not a plain value") from None


def _quote(path: str) -> str:
    if not path.startswith("/") or any(c in path for c in "'\\\n\r\x00"):
        raise ValueError(f"unsafe board path {path!r}")
    return repr(path)


class Repl:
    """The raw REPL of the board on ``port`` (a path or pyserial URL)."""

    def __init__(self, port: str, baudrate: int = 115200):
        try:
            from mpremote.transport import TransportError
            from mpremote.transport_serial import SerialTransport
        except ImportError as exc:  # mpremote's console needs termios (POSIX) or msvcrt (Windows)
            raise ReplError(
                f"the board's REPL cannot be reached from this Python ({exc}); "
                "run `heatlog board install` from a normal terminal session"
            ) from None

        self._errors: tuple[type[BaseException], ...] = (TransportError, OSError)
        try:
            self.t = SerialTransport(port, baudrate)
        except self._errors as exc:
            raise ReplError(
                f"cannot open {port}: {exc}; list boards with `heatlog ports`"
            ) from None
        self.port = port

    def close(self) -> None:
        try:
            if self.t.in_raw_repl:
                self.t.exit_raw_repl()
            self.t.close()
        except self._errors:
            pass

    def __enter__(self) -> Repl:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def enter(self, timeout: float = 10.0) -> None:
        """Interrupt whatever runs and enter the raw REPL (no soft reset: main.py stays put)."""
        try:
            self.t.enter_raw_repl(soft_reset=False, timeout_overall=timeout)
        except self._errors as exc:
            raise ReplError(
                f"no MicroPython REPL on {self.port} ({exc}); if the board runs other code, "
                "reset it and try again"
            ) from None

    def run(self, code: str, timeout: float = 30.0) -> bytes:
        """Run code in the raw REPL; its stdout, or ReplError with the board's traceback."""
        from mpremote.transport import TransportExecError

        try:
            return self.t.exec(code)
        except TransportExecError as exc:
            tail = exc.error_output.strip().splitlines()[-1:] if exc.error_output else []
            raise ReplError("the board failed: " + (tail[0] if tail else "no message")) from None
        except self._errors as exc:
            raise ReplError(f"the REPL on {self.port} stopped answering: {exc}") from None

    def facts(self) -> BoardFacts:
        v = _literal(self.run(_FACTS), "board facts")
        if not (isinstance(v, tuple) and len(v) == 5):
            raise ReplError("board facts: unexpected answer")
        name, version, mpy, platform, has_hash = v
        return BoardFacts(
            name=str(name)[:32],
            version=tuple(int(x) for x in version)[:4],
            mpy=mpy if isinstance(mpy, int) and not isinstance(mpy, bool) else None,
            platform=str(platform)[:32],
            hashlib=bool(has_hash),
        )

    def listdir(self, path: str) -> list[tuple[str, bool]]:
        """[(name, is_dir)] of a board folder; [] if it does not exist."""
        code = (
            "import os\ntry:\n print(repr([(e[0], e[1] == 0x4000) for e in os.ilistdir("
            + _quote(path)
            + ")]))\nexcept OSError:\n print('[]')\n"
        )
        v = _literal(self.run(code), "listdir")
        return [(str(n), bool(d)) for n, d in v]

    def sha256(self, path: str, on_board: bool) -> str | None:
        """SHA-256 hex of a board file (hashlib on the board, else read back); None if absent."""
        if on_board:
            code = (
                "import hashlib\ntry:\n f = open(" + _quote(path) + ", 'rb')\nexcept OSError:\n"
                " print('None')\nelse:\n h = hashlib.sha256()\n b = bytearray(512)\n while True:\n"
                "  n = f.readinto(b)\n  if not n:\n   break\n  h.update(b[:n])\n f.close()\n"
                " print(repr(h.digest()))\n"
            )
            v = _literal(self.run(code), "hash")
            return None if v is None else bytes(v).hex()
        data = self.read(path)
        return None if data is None else hashlib.sha256(data).hexdigest()

    def read(self, path: str) -> bytes | None:
        code = (
            "import os\ntry:\n os.stat("
            + _quote(path)
            + ")\n print(1)\nexcept OSError:\n print(0)\n"
        )
        if self.run(code).strip() != b"1":
            return None
        try:
            return bytes(self.t.fs_readfile(path))
        except self._errors as exc:
            raise ReplError(f"reading {path} failed: {exc}") from None

    def write(self, path: str, data: bytes) -> None:
        try:
            self.t.fs_writefile(path, data, chunk_size=256)
        except self._errors as exc:
            raise ReplError(f"writing {path} failed: {exc}") from None

    def mkdir(self, path: str) -> None:
        self.run("import os\ntry:\n os.mkdir(" + _quote(path) + ")\nexcept OSError:\n pass\n")

    def rename(self, old: str, new: str) -> None:
        # littlefs renames over an existing file; FAT does not: remove first there
        self.run(
            "import os\ntry:\n os.rename(" + _quote(old) + ", " + _quote(new) + ")\n"
            "except OSError:\n os.remove(" + _quote(new) + ")\n os.rename(" + _quote(old)
            + ", " + _quote(new) + ")\n"
        )  # fmt: skip

    def remove(self, path: str) -> None:
        self.run("import os\ntry:\n os.remove(" + _quote(path) + ")\nexcept OSError:\n pass\n")

    def soft_reset(self) -> None:
        """Leave the raw REPL and soft-reset from the friendly REPL, so main.py runs."""
        try:
            self.t.exit_raw_repl()
            self.t.serial.write(b"\x04")
            time.sleep(0.2)
        except self._errors as exc:
            raise ReplError(f"soft reset failed: {exc}") from None


def interrupt_boot(port: str, seconds: float, baudrate: int = 115200) -> None:
    """Send Ctrl-C for `seconds` while a board boots (its abort window), so it stops at the REPL.
    The port may vanish and come back while the board resets (USB): keep trying to open it."""
    import serial

    end = time.monotonic() + seconds
    s = None
    while time.monotonic() < end:
        try:
            if s is None:
                s = serial.serial_for_url(port, baudrate=baudrate, timeout=0.05)
            s.write(b"\x03")
            s.read(256)
        except (serial.SerialException, OSError, ValueError):
            s = None
        time.sleep(0.05)
    if s is not None:
        s.close()
