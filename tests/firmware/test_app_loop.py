"""The board entry point (firmware/app.py) under CPython: fake time, serial port, select and
machine; real files in tmp_path through heatlog_fw.flashfs. Checks the abort window, the
command loop, watchdog start and feeding, the LED and that Ctrl-C handling is restored."""

import json
import shutil
import struct
import sys
import types
from pathlib import Path

import machine as fake_machine
import pytest
from heatlog_fw import framing
from heatlog_fw import protocol as pr

EXAMPLE = Path(__file__).resolve().parents[2] / "firmware" / "config.example.json"


class Clock:
    def __init__(self):
        self.t = 0
        self.slept = []

    def ticks_ms(self):
        return self.t

    def sleep_ms(self, ms):
        self.slept.append(ms)
        self.t += ms


class Serial:
    def __init__(self):
        self.incoming = bytearray()
        self.out = bytearray()
        self.buffer = self

    def read(self, n):
        b = bytes(self.incoming[:n])
        del self.incoming[:n]
        return b

    def write(self, data):
        self.out.extend(bytes(data))
        return len(data)


class Poller:
    """poll(0) says whether input waits; a poll with a timeout advances time, and ends the loop
    (KeyboardInterrupt) once the script runs out."""

    def __init__(self, serial, clock, script):
        self.serial, self.clock, self.script = serial, clock, script

    def register(self, *a):
        pass

    def poll(self, timeout):
        if timeout == 0:
            return bool(self.serial.incoming)
        self.clock.t += max(timeout, 1)
        for when, data in list(self.script):
            if self.clock.t >= when:
                self.serial.incoming.extend(data)
                self.script.remove((when, data))
        if self.clock.t > 9000:
            raise KeyboardInterrupt
        return False


board_gc_collections: list[int] = []


@pytest.fixture
def board(tmp_path, monkeypatch):
    kbd = []
    monkeypatch.setitem(
        sys.modules, "micropython", types.SimpleNamespace(const=lambda x: x, kbd_intr=kbd.append)
    )
    sys.modules.pop("app", None)
    import app

    clock = Clock()
    serial = Serial()
    root = tmp_path / "heatlog"
    root.mkdir()
    cfg = json.loads(EXAMPLE.read_text())
    cfg["channels"] = [cfg["channels"][0]]  # the on-chip ADC channel only
    (root / "config.json").write_text(json.dumps(cfg))
    fake_machine.WDT.instances.clear()
    monkeypatch.setattr(app, "ROOT", str(root))
    monkeypatch.setattr(app, "time", types.SimpleNamespace(
        ticks_ms=clock.ticks_ms, sleep_ms=clock.sleep_ms, gmtime=lambda s: (2021, 1, 1, 0, 0, 0, 4, 1),
        mktime=lambda t: 0,
    ))  # fmt: skip
    monkeypatch.setattr(app, "sys", types.SimpleNamespace(stdin=serial, stdout=serial))
    monkeypatch.setattr(app, "machine", fake_machine)
    collected = board_gc_collections
    collected.clear()
    monkeypatch.setattr(
        app,
        "gc",
        types.SimpleNamespace(mem_free=lambda: 123456, collect=lambda: collected.append(1)),
    )
    yield app, clock, serial, kbd, root
    sys.modules.pop("app", None)


def _replies(out):
    return [f for f in framing.Parser().feed(bytes(out)) if f[0] != framing.BAD]


def test_boot_abort_window_then_commands_run_and_watchdog(board, monkeypatch):
    app, clock, serial, kbd, root = board
    script = [
        (2100, framing.encode(pr.IDENTIFY, 1)),
        (2200, framing.encode(pr.SET_CLOCK, 2, struct.pack("<q", 1780000000000))),
        (2300, framing.encode(pr.START_RUN, 3)),
    ]
    poller = Poller(serial, clock, script)
    monkeypatch.setattr(app, "select", types.SimpleNamespace(poll=lambda: poller, POLLIN=1))
    with pytest.raises(KeyboardInterrupt):
        app.run()
    assert clock.slept[0] == app.ABORT_MS  # the abort window comes first
    assert kbd == [-1, 3]  # Ctrl-C off for the binary loop, restored on the way out
    replies = _replies(serial.out)
    types_ = [f[0] for f in replies]
    assert types_ == [pr.IDENTIFY | 0x80, pr.SET_CLOCK | 0x80, pr.START_RUN | 0x80]
    ident = json.loads(replies[0][2])
    assert (
        ident["board_id"] == "bench-1"
        and ident["mem_free"] == 123456
        and board_gc_collections  # identify's mem_free is taken after a collection
        and ident["reset_cause"] == 1
    )
    wdt = fake_machine.WDT.instances
    assert len(wdt) == 1 and wdt[0].timeout == 8000 and wdt[0].feeds > 100
    run = root / "r0001.hlg"
    # header (92 bytes, one channel) + the records flushed after flush_ms = 5000 (18 bytes each)
    size = run.stat().st_size
    assert (size - 92) % 18 == 0 and (size - 92) // 18 >= 5, size
    assert json.loads((root / "state.json").read_text())["active"] == 1


def test_bad_config_idles_and_still_answers(board, monkeypatch):
    app, clock, serial, kbd, root = board
    (root / "config.json").write_text('{"board_id": "x"}')
    poller = Poller(serial, clock, [(2500, framing.encode(pr.START_RUN, 9))])
    monkeypatch.setattr(app, "select", types.SimpleNamespace(poll=lambda: poller, POLLIN=1))
    with pytest.raises(KeyboardInterrupt):
        app.run()
    assert b"heatlog: config invalid" in bytes(serial.out)
    (reply,) = _replies(serial.out)
    assert reply[0] == pr.ERROR and reply[2][0] == pr.E_STATE and b"interval_ms" in reply[2]
    assert fake_machine.WDT.instances == []  # no watchdog without logging: no reset loop
    assert kbd == [-1, 3]
    shutil.rmtree(root)
