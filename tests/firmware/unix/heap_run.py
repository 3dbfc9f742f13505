# ruff: noqa: UP031 - %-formatting, which every MicroPython port has
# A long run of the real firmware Logger inside a small heap, under the MicroPython unix port.
#
# Usage: micropython -X heapsize=N tests/firmware/unix/heap_run.py REPO IMAGE SAMPLES [MPYDIR|- [natural]]
#
# The log store writes to a littlefs v2 volume (vfs.VfsLfs2) whose block device is the host file
# IMAGE, so the volume's bytes live outside the heap while littlefs' own caches, the firmware and
# every object it makes live inside it, as on a board. The Logger (example config: an on-chip ADC
# divider and a MAX31865 on allocation-free fakes of `machine`) boots, the host sets its clock and starts a run
# over the protocol, SAMPLES samples are logged at 1 s, with an identify and a list-runs request
# every 500 samples; the run is stopped and read back. Prints the heap figures:
#   heap        the GC heap size (gc.mem_free() + gc.mem_alloc())
#   boot_free   free after imports and boot, after a collection
#   peak_live   the most allocated right after a collection (every 500 samples)
#   peak_seen   the most allocated at any sample, garbage included (what mem_free without a
#               collection reports is heap - this, give or take)
import gc
import struct
import sys

import vfs

repo, image, samples = sys.argv[1], sys.argv[2], int(sys.argv[3])
# MPYDIR (optional): a folder holding heatlog_fw/*.mpy precompiled by mpy-cross, used first
sys.path.insert(0, repo + "/firmware")
MPYDIR = sys.argv[4] if len(sys.argv) > 4 and sys.argv[4] != "-" else None
if MPYDIR:
    sys.path.insert(0, MPYDIR)
# NATURAL: no collection forced during the run, as on a board (identify readings then show the
# garbage collector's saw-tooth)
NATURAL = sys.argv[5:] == ["natural"]

BLOCK = 4096
N_BLOCKS = 352  # 1408 KiB, a Pico's littlefs volume


class FileFlash:
    """A NOR-like block device kept in a host file (erase writes 0xFF; programs land as given:
    littlefs only programs erased pages, so AND and copy agree)."""

    def __init__(self, path):
        self.f = open(path, "r+b")  # noqa: SIM115 - open for the device's life
        self.ff = bytearray(b"\xff" * 256)

    def readblocks(self, block, buf, off=0):
        self.f.seek(block * BLOCK + off)
        self.f.readinto(buf)

    def writeblocks(self, block, buf, off=0):
        self.f.seek(block * BLOCK + off)
        self.f.write(buf)

    def ioctl(self, op, arg):
        if op == 4:
            return N_BLOCKS
        if op == 5:
            return BLOCK
        if op == 6:
            self.f.seek(arg * BLOCK)
            for _ in range(BLOCK // 256):
                self.f.write(self.ff)
        return 0


with open(image, "wb") as f:
    chunk = b"\xff" * BLOCK
    for _ in range(N_BLOCKS):
        f.write(chunk)
dev = FileFlash(image)
vfs.VfsLfs2.mkfs(dev, progsize=256)
vfs.mount(vfs.VfsLfs2(dev, progsize=256), "/logs")

import json  # noqa: E402

from heatlog_fw import crc, framing  # noqa: E402
from heatlog_fw import logformat as lf  # noqa: E402
from heatlog_fw import protocol as pr  # noqa: E402
from heatlog_fw.flashfs import FlashFs  # noqa: E402
from heatlog_fw.logger import Logger  # noqa: E402
from heatlog_fw.logstore import run_name  # noqa: E402

ANCHOR_MS = 1780000000000  # invented: the host-set clock
CONFIG = {  # invented bench config: an NTC divider on the on-chip ADC and a Pt100 on a MAX31865
    "board_id": "heap-1", "interval_ms": 1000, "oversample": 4, "flush_ms": 3000,
    "channels": [
        {"kind": "adc_divider", "probe_id": "NTC-A1", "pin": 26, "r_fixed_ohm": 10000,
         "model": {"type": "steinhart_hart", "A": 1.129148e-3, "B": 2.34125e-4, "C": 8.76741e-8}},
        {"kind": "max31865", "probe_id": "PT100-B7", "spi": {"id": 0, "sck": 18, "mosi": 19,
         "miso": 16}, "cs": 17, "r_ref_ohm": 430, "wires": 4,
         "model": {"type": "callendar_van_dusen", "R0": 100}},
    ],
}  # fmt: skip


class QuietPin:
    """A pin that keeps no history (the general fake records every write: it would grow)."""

    OUT = 1
    IN = 0

    def __init__(self, *a, **k):
        self.v = 0

    def __call__(self, v=None):
        if v is None:
            return self.v
        self.v = v
        return None

    def value(self, v=None):
        return self(v)


class QuietAdc:
    def __init__(self, *a, **k):
        pass

    def read_u16(self):
        return 0x8008


class QuietSpi:
    """Answers like a MAX31865 at code 7620 with no fault, allocating nothing."""

    def __init__(self, *a, **k):
        pass

    def write(self, buf):
        pass

    def readinto(self, buf):
        if len(buf) == 2:
            buf[0] = (7620 << 1) >> 8
            buf[1] = (7620 << 1) & 0xFF
        else:
            buf[0] = 0


class Hw:
    """The parts of `machine` the firmware builds its drivers from."""

    Pin = QuietPin
    ADC = QuietAdc
    SPI = QuietSpi


class Link:
    """The host end of the serial link (firmware framing)."""

    def __init__(self):
        self.out = bytearray()
        self.parser = framing.Parser()
        self.rid = 0

    def write(self, data):
        self.out.extend(data)

    def frames(self):
        got = list(self.parser.feed(bytes(self.out)))
        self.out = bytearray()
        return got

    def ask(self, t, payload=b"", now=0):
        self.rid = (self.rid + 1) & 0xFF
        lg.poll(framing.encode(t, self.rid, payload), now)
        got = [f for f in self.frames() if f[0] != 0xC0]
        assert len(got) == 1 and got[0][1] == self.rid, got
        return got[0][0], got[0][2]


with open("/logs/config.json", "w") as f:
    f.write(json.dumps(CONFIG))
link = Link()
# gc.mem_free without a collection first: shows the saw-tooth (app.py collects first)
lg = Logger(FlashFs(), "/logs", Hw(), link.write, 1, gc.mem_free)
for d in lg.sampler.channels:
    if hasattr(d, "wait_ms"):
        d.wait_ms = 0  # no real conversion time to wait for
lg.boot(0)
link.frames()
t, _ = link.ask(pr.SET_CLOCK, struct.pack("<q", ANCHOR_MS), 0)
assert t == pr.SET_CLOCK | 0x80
t, p = link.ask(pr.START_RUN, b"", 0)
assert t == pr.START_RUN | 0x80, p
run = struct.unpack("<I", p)[0]
gc.collect()
heap = gc.mem_free() + gc.mem_alloc()
boot_free = gc.mem_free()
peak_live = gc.mem_alloc()
peak_seen = peak_live
now = 0
ident_free = []  # identify's mem_free (no collection first) beside mem_free after a collection
for i in range(samples):
    now += 1000
    lg.poll(None, now)
    a = gc.mem_alloc()
    if a > peak_seen:
        peak_seen = a
    if i % 500 == 499:
        t, p = link.ask(pr.IDENTIFY, b"", now)
        assert t == pr.IDENTIFY | 0x80, p
        reported = json.loads(p)["mem_free"]
        t, p = link.ask(pr.LIST_RUNS, struct.pack("<H", 0), now)
        assert t == pr.LIST_RUNS | 0x80, p
        link.frames()
        if NATURAL:
            ident_free.append(reported)
            continue
        gc.collect()
        ident_free.append((reported, gc.mem_free()))
        if gc.mem_alloc() > peak_live:
            peak_live = gc.mem_alloc()
logged = lg.sampler.seq
t, p = link.ask(pr.STOP_RUN, b"", now + 1)
assert t == pr.STOP_RUN | 0x80, p
# read the run back: every sample is a CRC-valid record, in order

n = 0
with open("/logs/" + run_name(run), "rb") as f:
    head = f.read(200)
    h = lf.unpack_header(head)
    f.seek(h["header_size"])
    rec = bytearray(h["record_size"])
    while f.readinto(rec) == len(rec):
        assert rec[0] == lf.RECORD_TAG
        assert crc.crc16(rec, 0xFFFF, 0, len(rec) - 2) == rec[-2] | (rec[-1] << 8)
        assert struct.unpack_from("<I", rec, 4)[0] == n
        n += 1
vfs.umount("/logs")
print(
    "heap run: %d samples logged, %d records read back; heap %d bytes, boot_free %d, "
    "peak_live %d, peak_seen %d; modules from %s"
    % (logged, n, heap, boot_free, peak_live, peak_seen, "mpy" if MPYDIR else "source")
)
gc.collect()
print("identify mem_free without a collection%s:" % ("" if NATURAL else " / after one"), ident_free)
print("mem_free after a collection at the end:", gc.mem_free())
sys.exit(0 if n == logged >= samples else 1)
