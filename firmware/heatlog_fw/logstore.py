"""One append-only file per run, written in flushed batches; torn tails resume in a new segment.

Guarantees (with littlefs, where a file after power loss is as at its last flush):
- a record is on flash once `flush` has returned; a power cut loses at most the records of the
  current batch (at most `flush_ms` of data) and never changes earlier bytes;
- a torn or bad tail (FAT, bit rot) is left in place, counted, and followed by a segment marker;
- below the free-space floor, or on ENOSPC, the run stops with REC_LAST; nothing is overwritten;
- a run is erased only when the caller proves it holds the whole file (size and CRC-32).
"""

import json
import struct

from . import logformat as lf
from .crc import crc16, crc32
from .ticks import ticks_diff

try:
    from micropython import const  # pyright: ignore[reportAssignmentType]
except ImportError:

    def const(x):
        return x


_ENOSPC = const(28)
_CHUNK = const(1024)
STATE = "state.json"


class StoreError(Exception):
    """A log-store request cannot be done (unknown run, run active, checksum mismatch...)."""


class StoreFull(StoreError):
    """Free space is below the floor: logging stopped, earlier data kept."""


def _idle():
    pass


def run_name(run_no):
    s = str(run_no)
    return "r" + "0" * (4 - len(s)) + s + ".hlg"


class LogStore:
    def __init__(self, root, fs, batch_records=16, flush_ms=5000, floor_pct=10, space_ms=60000):
        self.root = root
        self.fs = fs
        self.batch_records = batch_records
        self.flush_ms = flush_ms
        self.floor_pct = max(10, floor_pct)
        self.space_ms = space_ms
        fs.mkdir(root)
        self.state = self._load_state()
        self.file = None
        self.run_no = -1
        self.packer = None
        self.batch = bytearray(0)
        self.pending = 0
        self.last_flush = 0
        self.last_space = 0
        self.stop_reason = ""
        self.segment_no = 0
        self.anchor_ms = 0
        self.seg_buf = bytearray(lf.SEGMENT_SIZE)
        self.progress = _idle  # called during long walks (the app feeds the watchdog)

    # -- state file, rewritten via temp file + rename --------------------------------------
    def _path(self, name):
        return self.root + "/" + name

    def _load_state(self):
        for name in (STATE, STATE + ".tmp"):
            try:
                with self.fs.open(self._path(name), "r") as f:
                    st = json.loads(f.read())
                if isinstance(st, dict) and "next_run" in st:
                    return st
            except (OSError, ValueError):
                pass
        return {"next_run": 1, "active": None, "segment": 0}

    def _save_state(self):
        tmp = self._path(STATE + ".tmp")
        with self.fs.open(tmp, "w") as f:
            f.write(json.dumps(self.state))
            f.flush()
        try:
            self.fs.rename(tmp, self._path(STATE))
        except OSError:  # FAT cannot rename onto an existing file
            self.fs.remove(self._path(STATE))
            self.fs.rename(tmp, self._path(STATE))

    # -- space ------------------------------------------------------------------------------
    def space(self):
        """(free bytes, total bytes)."""
        return self.fs.space(self.root)

    def below_floor(self, extra=0):
        """True if free space less `extra` bytes is under the floor (floor_pct of the volume)."""
        free, total = self.space()
        return (free - extra) * 100 < total * self.floor_pct

    # -- runs -------------------------------------------------------------------------------
    @property
    def active(self):
        return self.file is not None

    def start(self, board_id, firmware, interval_ms, oversample, channels, anchor_ms, now):
        """Create a new run file (header flushed before the state names it). Returns run no."""
        if self.file is not None:
            raise StoreError("a run is already active")
        if self.below_floor():
            self.stop_reason = "full"
            raise StoreFull("free space below floor; pull and erase runs first")
        run_no = self.state["next_run"]
        while self.fs.size(self._path(run_name(run_no))) >= 0:
            run_no += 1  # never overwrite a file, even one the state does not know
        hdr = lf.pack_header(
            board_id, firmware, interval_ms, oversample, anchor_ms, run_no, channels
        )
        f = self.fs.open(self._path(run_name(run_no)), "wb")
        try:
            f.write(hdr)
            f.flush()
        except OSError as e:
            f.close()
            self._stopped_full(e)
            raise StoreFull("no space for a new run") from None
        self.state["next_run"] = run_no + 1
        self.state["active"] = run_no
        self.state["segment"] = 0
        self._save_state()
        self._open_run(f, run_no, len(channels), anchor_ms, 0, now)
        return run_no

    def _open_run(self, f, run_no, n_channels, anchor_ms, segment_no, now):
        self.file = f
        self.run_no = run_no
        self.packer = lf.RecordPacker(n_channels)
        self.batch = bytearray(self.packer.size * self.batch_records)
        self.pending = 0
        self.last_flush = now
        self.last_space = now
        self.stop_reason = ""
        self.segment_no = segment_no
        self.anchor_ms = anchor_ms

    def resume(self, reset_cause, clock_ms, interval_ms, now):
        """Reopen the run the state names after a reset. Returns None if there is none, else
        (run_no, next_seq, offset_base_ms, header dict). Appends a segment marker."""
        run_no = self.state.get("active")
        if run_no is None:
            return None
        path = self._path(run_name(run_no))
        scan = self._scan(path)
        if scan is None:  # header unreadable: leave the file alone, start fresh later
            self.state["active"] = None
            self._save_state()
            return None
        hdr, last_seq, last_off, anchor, damaged = scan
        cause = lf.SEG_REBOOT | (lf.SEG_TORN_TAIL if damaged else 0)
        if clock_ms and anchor:
            base = clock_ms - anchor
            cause |= lf.SEG_CLOCK_VALID
        else:
            base = last_off + interval_ms
            cause |= lf.SEG_GAP_UNKNOWN
            anchor = 0  # wall time after an outage of unknown length is unknown
            if clock_ms:  # clock set now: new anchor for this segment
                anchor = clock_ms - base
                cause |= lf.SEG_CLOCK_VALID
        seg = self.state.get("segment", 0) + 1
        f = self.fs.open(path, "ab")
        self._open_run(f, run_no, hdr["n_channels"], anchor, seg, now)
        lf.pack_segment(self.seg_buf, cause, reset_cause, seg, last_seq + 1, base, anchor)
        if not self._write(self.seg_buf):
            return None
        self.state["segment"] = seg
        self._save_state()
        return run_no, last_seq + 1, base, hdr

    def _scan(self, path):
        """Walk the blocks of a run file: header, last good seq/offset, anchor, damage seen."""
        try:
            f = self.fs.open(path, "rb")
        except OSError:
            return None
        try:
            head = f.read(lf.header_size(lf.MAX_CHANNELS))
            try:
                hdr = lf.unpack_header(head)
            except ValueError:
                return None
            size = self.fs.size(path)
            rsize = hdr["record_size"]
            pos = hdr["header_size"]
            last_seq, last_off, anchor, damaged = -1, 0, hdr["anchor_ms"], False
            blk = bytearray(max(rsize, lf.SEGMENT_SIZE))
            while pos < size:
                if pos & 0xFFF < rsize:
                    self.progress()
                f.seek(pos)
                n = f.readinto(blk)
                tag = blk[0]
                k = (
                    rsize
                    if tag == lf.RECORD_TAG
                    else lf.SEGMENT_SIZE
                    if tag == lf.SEGMENT_TAG
                    else 0
                )
                if k and n >= k and crc16(blk, 0xFFFF, 0, k - 2) == blk[k - 2] | (blk[k - 1] << 8):
                    if tag == lf.RECORD_TAG:
                        last_seq, last_off = struct.unpack_from("<II", blk, 4)
                    else:
                        s = struct.unpack_from("<BBBBIIIq", blk, 0)
                        last_seq, last_off = s[5] - 1, s[6]
                        damaged = False  # damage before a marker is not the tail
                        if s[1] & lf.SEG_CLOCK_VALID:
                            anchor = s[7]
                        elif s[1] & lf.SEG_REBOOT:
                            anchor = 0
                    pos += k
                else:
                    damaged = True  # torn or bad block: step on bytewise to the next good one
                    pos += 1
            return hdr, last_seq, last_off, anchor, damaged
        finally:
            f.close()

    def add(self, seq, offset_ms, flags, fault_mask, raw, now):
        """Queue one record; flush when the batch is full or flush_ms passed. Allocation-free
        except on flush. Returns False once the run has stopped (storage full or write error)."""
        if self.file is None:
            return False
        self.packer.pack(
            self.batch, self.pending * self.packer.size, seq, offset_ms, flags, fault_mask, raw
        )
        self.pending += 1
        if self.pending >= self.batch_records or ticks_diff(now, self.last_flush) >= self.flush_ms:
            return self.flush(now)
        return True

    def flush(self, now):
        """Write and flush the pending batch. Checks the free-space floor every space_ms."""
        if self.file is None:
            return False
        last = False
        if ticks_diff(now, self.last_space) >= self.space_ms:
            self.last_space = now
            last = self.below_floor(2 * self.pending * self.packer.size)
            if last and self.pending:
                self._mark_last()
        ok = True
        if self.pending:
            ok = self._write(memoryview(self.batch)[: self.pending * self.packer.size])
            self.pending = 0
        self.last_flush = now
        if last and ok:
            self._close("full")
            return False
        return ok

    def _mark_last(self):
        r = self.packer.size
        p = (self.pending - 1) * r
        self.batch[p + 1] |= lf.REC_LAST
        struct.pack_into("<H", self.batch, p + r - 2, crc16(self.batch, 0xFFFF, p, p + r - 2))

    def _write(self, data):
        try:
            self.file.write(data)
            self.file.flush()
            return True
        except OSError as e:
            self._stopped_full(e)
            return False

    def _stopped_full(self, e):
        reason = "full" if e.args and e.args[0] == _ENOSPC else "write error"
        self._close(reason)

    def _close(self, reason):
        if self.file is not None:
            try:
                self.file.close()
            except OSError:
                pass
        self.file = None
        self.stop_reason = reason
        self.state["active"] = None
        try:
            self._save_state()
        except OSError:
            pass

    def stop(self, now):
        """Flush and close the active run; a stopped run is never resumed."""
        if self.file is not None:
            self.flush(now)
            self._close("stopped")

    def clock_set(self, anchor_ms, next_seq, offset_ms, now):
        """The host set the clock during a run: flush, then append a segment marker."""
        if self.file is None:
            return
        self.flush(now)
        if self.file is None:
            return
        self.segment_no += 1
        self.anchor_ms = anchor_ms
        cause = lf.SEG_CLOCK_SET | lf.SEG_CLOCK_VALID
        lf.pack_segment(self.seg_buf, cause, 0xFF, self.segment_no, next_seq, offset_ms, anchor_ms)
        if self._write(self.seg_buf):
            self.state["segment"] = self.segment_no
            self._save_state()

    # -- host requests ---------------------------------------------------------------------
    def runs(self):
        """[(run_no, size)] of every run file, oldest first."""
        out = []
        for name in self.fs.listdir(self.root):
            if len(name) == 9 and name[0] == "r" and name[5:] == ".hlg" and name[1:5].isdigit():
                out.append((int(name[1:5]), self.fs.size(self._path(name))))
        out.sort()
        return out

    def _existing(self, run_no):
        path = self._path(run_name(run_no))
        size = self.fs.size(path)
        if size < 0:
            raise StoreError("no such run")
        return path, size

    def read(self, run_no, offset, buf):
        """Read into buf from offset (flushed bytes only). Returns (bytes read, file size)."""
        path, size = self._existing(run_no)
        if offset > size:
            raise StoreError("offset beyond end of run")
        with self.fs.open(path, "rb") as f:
            f.seek(offset)
            n = f.readinto(buf) if offset < size else 0
        return n or 0, size

    def checksum(self, run_no):
        """(size, CRC-32) of the whole run file as it is on flash now."""
        path, size = self._existing(run_no)
        c = 0
        buf = bytearray(_CHUNK)
        mv = memoryview(buf)
        done = 0
        with self.fs.open(path, "rb") as f:
            while done < size:
                n = f.readinto(buf)
                if not n:
                    break
                c = crc32(mv[:n], c)
                done += n
                self.progress()
        return done, c

    def erase(self, run_no, size, crc):
        """Remove a run only if (size, crc) equal the file's own; never the active run."""
        if self.file is not None and run_no == self.run_no:
            raise StoreError("run is active; stop it first")
        have = self.checksum(run_no)
        if have != (size, crc):
            raise StoreError("checksum mismatch; pull the run again before erasing")
        self.fs.remove(self._path(run_name(run_no)))
