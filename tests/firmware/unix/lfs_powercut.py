# ruff: noqa: UP031 - %-formatting, which every MicroPython port has
# The firmware's log store on a real littlefs v2 volume (vfs.VfsLfs2), power cut at every flash
# operation of seeded sessions, under the MicroPython unix port.
#
# Usage: micropython tests/firmware/unix/lfs_powercut.py REPO [SESSIONS [FIRST_SEED [OPTION]]]
# OPTION no-sync: a deliberately broken store whose flush does not reach flash, to show the sweep
# catches lost records; export=DIR: after every 5th cut, copy the run files to the host folder
# DIR as SEED_OP_TORN_NAME, for the host decoder to read (tests/firmware/test_unixport.py).
#
# The block device behaves like NOR flash: erase sets a 4 KiB block to 0xFF, program ANDs bytes
# into it (it can only clear bits). A session (seeded) starts runs, adds records in flushed
# batches (full batches and time-based flushes), sets the clock mid-run, stops runs and erases
# older ones with their checksum. For every flash operation k of a session the session is replayed
# with power lost just before operation k, and, for a program or erase, once more with the
# operation torn (only a seeded prefix of the page programmed or erased). After each cut the
# volume is mounted again, the store resumes the interrupted run, logs two records, stops, and
# starts and stops one more run. Then every run file is walked independently:
#   lost:      a record whose flush had returned before the cut is missing (run not erased);
#   corrupt:   a CRC-valid record that was never written (wrong seq, offset or value);
#   disorder:  sequence numbers not increasing;
#   unmounted: the volume did not mount after the cut.
# Prints one line of figures and exits 1 if any count is non-zero.
import sys

import vfs

repo = sys.argv[1]
SESSIONS = int(sys.argv[2]) if len(sys.argv) > 2 else 12
FIRST_SEED = int(sys.argv[3]) if len(sys.argv) > 3 else 1
NO_SYNC = sys.argv[4:] == ["no-sync"]
EXPORT = sys.argv[4][7:] if len(sys.argv) > 4 and sys.argv[4].startswith("export=") else None
for p in (repo + "/tests/firmware", repo + "/firmware", repo + "/tests/firmware/fakes"):
    sys.path.insert(0, p)

from heatlog_fw import logformat as lf  # noqa: E402
from heatlog_fw.flashfs import FlashFs  # noqa: E402
from heatlog_fw.logstore import LogStore, run_name  # noqa: E402
from portable_checks import CHANNELS, _blocks  # noqa: E402

if NO_SYNC:

    class _NoSync:
        def __init__(self, f):
            self.f = f

        def write(self, b):
            return self.f.write(b)

        def flush(self):
            pass

        def close(self):
            self.f.close()

    _open = FlashFs.open
    FlashFs.open = lambda self, path, mode: (
        _NoSync(_open(self, path, mode)) if mode in ("wb", "ab") else _open(self, path, mode)
    )


BLOCK = 4096
N_BLOCKS = 32  # a 128 KiB volume: small, so littlefs wraps blocks and compacts metadata often
MOUNT = "/flash"
ROOT = MOUNT + "/heatlog"


class NorFlash:
    """A RAM block device with NOR semantics and a power cut armed at operation `cut_at`.

    At the cut the operation does only its torn prefix and the device goes dead: it ignores every
    later program and erase (MicroPython's block-device glue turns a Python exception into an
    I/O error code for littlefs, so an exception could not stop the session anyway; what the
    session does after the cut never reaches the flash). One object per power-on: dead for good, so file objects of the old mount
    (closed later by the garbage collector's finalisers) can never write into the next one. A dead
    device ignores writes; reads copy without allocating (finalisers run with the heap locked).
    """

    def __init__(self, data, cut_at=-1, torn=0, kinds=None):
        self.data = data
        self.ops = 0
        self.cut_at = cut_at
        self.torn = torn  # bytes of the cut operation that still happen (a prefix)
        self.dead = False
        self.kinds = kinds  # per counted operation: bytes programmed, or -BLOCK for an erase

    def _count(self, kind, n):
        """Count one flash operation; returns how many of its n bytes happen (n = all)."""
        if self.dead:
            return -1
        k = self.ops
        self.ops += 1
        if self.kinds is not None:
            self.kinds.append(n if kind == "p" else -n)
        if k == self.cut_at:
            self.dead = True
            return min(self.torn, n - 1) if self.torn else 0
        return n

    def readblocks(self, block, buf, off=0):
        a = block * BLOCK + off
        if not self.dead:
            buf[:] = memoryview(self.data)[a : a + len(buf)]
            return
        d = self.data  # a finaliser of the old mount's files: the heap may be locked
        for i in range(len(buf)):
            buf[i] = d[a + i]

    def writeblocks(self, block, buf, off=None):
        if off is None:  # the simple interface (whole blocks): erase first, as a block device
            self.ioctl(6, block)
            off = 0
        n = len(buf)
        m = self._count("p", n)
        if m < 0:
            return
        a = block * BLOCK + off
        d = self.data
        for i in range(m):
            d[a + i] &= buf[i]

    def ioctl(self, op, arg):
        if op == 4:
            return N_BLOCKS
        if op == 5:
            return BLOCK
        if op == 6:
            m = self._count("e", BLOCK)
            if m < 0:
                return 0
            a = arg * BLOCK
            d = self.data
            for i in range(m):
                d[a + i] = 0xFF
            return 0
        return 0


class Rng:
    """A small LCG, so a seed gives the same session on every interpreter."""

    def __init__(self, seed):
        self.s = (seed * 2654435761 + 12345) & 0x7FFFFFFF

    def next(self, n):
        self.s = (self.s * 1103515245 + 12345) & 0x7FFFFFFF
        return (self.s >> 8) % n


def _raw(run, seq):
    return [(run * 7919 + seq * 104729) & 0xFFFFFF, -((run * 31 + seq * 17) & 0xFFFFF)]


def mount(flash):
    try:
        vfs.umount(MOUNT)
    except OSError:
        pass
    v = vfs.VfsLfs2(flash, readsize=256, progsize=256)  # raises OSError if it does not mount
    vfs.mount(v, MOUNT)


class Expect:
    """What the session wrote: records per run, how many are flushed, runs erased."""

    def __init__(self):
        self.written = {}  # run -> {seq: (offset, raw0, raw1)}
        self.flushed = {}  # run -> number of leading records whose flush returned
        self.erased = set()
        self.erasing = None
        self.after = []  # (run, seq) logged after the resume: flushed by stop(), must be there


def session(seed, ex, flash):
    """One seeded session on the mounted volume. Expectations are recorded only while the
    device is alive: a flush that returned before the cut is on flash."""
    rng = Rng(seed)
    batch = 2 + rng.next(7)
    st = LogStore(ROOT, FlashFs(), batch_records=batch, flush_ms=1500 + 500 * rng.next(6),
                  space_ms=rng.next(2) * 4000)  # fmt: skip
    now = 0
    stopped = []
    for _ in range(1 + rng.next(3)):
        run = st.start("pc-" + str(seed), "0.1.0", 1000, 4, CHANNELS, 0, now)
        if flash.dead:
            return
        ex.written[run] = {}
        ex.flushed[run] = 0
        n = 4 + rng.next(20)
        clock_at = rng.next(n + 5)
        for seq in range(n):
            now += 1000 + rng.next(600)
            raw = _raw(run, seq)
            ex.written[run][seq] = (seq * 1000, raw[0], raw[1])
            st.add(seq, seq * 1000, 0, 0, raw, now)
            if flash.dead:
                return
            if st.pending == 0:
                ex.flushed[run] = seq + 1
            if seq == clock_at:
                st.clock_set(1780000000000 + now, seq + 1, seq * 1000 + 500, now)
                if flash.dead:
                    return
                ex.flushed[run] = seq + 1
        st.stop(now)
        if flash.dead:
            return
        ex.flushed[run] = n
        stopped.append(run)
        if len(stopped) > 1 and rng.next(2):
            old = stopped.pop(0)
            size, crc = st.checksum(old)
            ex.erasing = old
            st.erase(old, size, crc)
            if flash.dead:
                return
            ex.erasing = None
            ex.erased.add(old)


def recover(ex, counts):
    """After the cut: resume, log two records, stop; start and stop one more run."""
    st = LogStore(ROOT, FlashFs(), batch_records=4, flush_ms=1000, space_ms=0)
    res = st.resume(3, 0, 1000, 0)
    if res is not None:
        run, seq0, base = res[0], res[1], res[2]
        counts["resumed"] += 1
        for k in range(2):
            raw = _raw(run, seq0 + k)
            ex.written.setdefault(run, {})[seq0 + k] = (base + k * 1000, raw[0], raw[1])
            st.add(seq0 + k, base + k * 1000, 0, 0, raw, k)
            ex.after.append((run, seq0 + k))
        st.stop(5000)
        ex.flushed.setdefault(run, 0)
    run = st.start("after", "0.1.0", 1000, 4, CHANNELS, 0, 0)
    if run in ex.written or run in ex.erased:
        counts["reused"] += 1
    ex.written[run] = {}
    ex.flushed[run] = 0
    st.stop(1)


def verify(ex, counts):
    found = {}  # run -> {seq: True} of the CRC-valid records on flash
    names = {}
    for name in FlashFs().listdir(ROOT):
        names[name] = True
    for run, written in ex.written.items():
        name = run_name(run)
        want = ex.flushed.get(run, 0)
        if name not in names:
            if run not in ex.erased and run != ex.erasing and want:
                counts["lost"] += want
            continue
        with open(ROOT + "/" + name, "rb") as f:
            data = f.read()
        if len(data) < lf.header_size(len(CHANNELS)):
            if want:
                counts["lost"] += want
            continue
        try:
            lf.unpack_header(data)
        except ValueError:
            counts["corrupt"] += 1
            continue
        seen = {}
        found[run] = seen
        last = -1
        for b in _blocks(data, lf.RECORD_TAG):
            seq, off, r0, r1 = lf.struct.unpack_from("<IIii", b, 4)
            if written.get(seq) != (off, r0, r1):
                counts["corrupt"] += 1
            if seq <= last:
                counts["disorder"] += 1
            last = seq
            seen[seq] = True
        for seq in range(want):
            counts["checked"] += 1
            if seq not in seen:
                counts["lost"] += 1
    for run, seq in ex.after:
        counts["checked"] += 1
        if seq not in found.get(run, {}):
            counts["lost"] += 1


def export(folder, prefix):
    for name in FlashFs().listdir(ROOT):
        if name.endswith(".hlg"):
            with open(ROOT + "/" + name, "rb") as f:
                data = f.read()
            with open(folder + "/" + prefix + name, "wb") as f:  # the host's file system
                f.write(data)


def main():
    counts = {k: 0 for k in ("lost", "corrupt", "disorder", "unmounted", "reused", "resumed",
                             "checked", "before", "torn")}  # fmt: skip
    data = bytearray(b"\xff" * (BLOCK * N_BLOCKS))
    vfs.VfsLfs2.mkfs(NorFlash(data), readsize=256, progsize=256)
    blank = bytes(data)
    for seed in range(FIRST_SEED, FIRST_SEED + SESSIONS):
        data[:] = blank  # dry run: count the flash operations of this session
        mount(NorFlash(data))
        dry = NorFlash(data, kinds=[])
        mount(dry)
        session(seed, Expect(), dry)
        kinds = dry.kinds
        rng = Rng(seed * 7 + 3)
        for k in range(len(kinds)):
            # cut before the operation, and torn inside it: a seeded prefix of the pages
            # programmed (or of the block erased) reaches the flash
            variants = [0, 1 + rng.next(abs(kinds[k]) - 1)]
            for torn in variants:
                counts["torn" if torn else "before"] += 1
                data[:] = blank
                flash = NorFlash(data, k, torn)
                mount(flash)
                ex = Expect()
                try:
                    session(seed, ex, flash)
                except Exception:  # the firmware meeting I/O errors after the cut is fine
                    if not flash.dead:
                        raise
                if not flash.dead:
                    raise AssertionError("no power cut at op %d of seed %d" % (k, seed))
                # (finalisers of the old mount's files may run later: against the dead device)
                try:
                    mount(NorFlash(data))
                except OSError as e:
                    counts["unmounted"] += 1
                    print("seed", seed, "op", k, "torn", torn, "does not mount:", e)
                    continue
                recover(ex, counts)
                before = counts["lost"] + counts["corrupt"] + counts["disorder"]
                verify(ex, counts)
                if EXPORT and k % 5 == 0:
                    export(EXPORT, "%d_%d_%d_" % (seed, k, torn))
                if counts["lost"] + counts["corrupt"] + counts["disorder"] != before:
                    print("seed", seed, "op", k, "torn", torn, "failed:", counts)
    vfs.umount(MOUNT)
    cuts = counts["before"] + counts["torn"]
    print(
        "littlefs power-cut sweep: %d sessions, %d cut points (%d before an operation, %d torn"
        " programs/erases), %d flushed records checked, %d runs resumed; lost %d, corrupt"
        " accepted %d, out of order %d, unmountable %d, run number reused %d"
        % (SESSIONS, cuts, counts["before"], counts["torn"], counts["checked"], counts["resumed"],
           counts["lost"], counts["corrupt"], counts["disorder"], counts["unmounted"],
           counts["reused"])
    )  # fmt: skip
    bad = counts["lost"] + counts["corrupt"] + counts["disorder"] + counts["unmounted"]
    sys.exit(1 if bad or counts["reused"] or not cuts else 0)


main()
