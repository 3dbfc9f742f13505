"""Steady sampling without cumulative drift, allocation-free per sample.

Slot k is due at start + k*interval (ticks_add, wrap-safe). A record's time offset is the slot's
nominal offset plus how late the sample actually started (a small ticks_diff), so offsets stay
exact integers however long the run. Catch-up policy: if the loop falls a whole interval or more
behind, the missed slots are skipped (never sampled in a burst) and the next record carries
REC_SLOTS_SKIPPED; its offset shows the gap.
"""

from . import logformat as lf
from .ticks import ticks_add, ticks_diff


class Sampler:
    def __init__(self, channels, interval_ms, oversample):
        self.channels = channels
        self.n = len(channels)
        self.interval = interval_ms
        self.oversample = oversample
        self.raw = [0] * self.n
        self.fault_mask = 0
        self.seq = 0
        self.next_due = 0
        self.due_offset = 0
        self.flags = 0
        self.skipped = 0
        self.running = False
        self.last_offset = 0
        self.last_flags = 0

    def start(self, now, seq=0, offset_ms=0, flags=0):
        """Begin (or resume) with the first slot due now at offset_ms from the run start.
        Channels with a start-of-run check (MAX31865 fault-detection cycle) run it here."""
        for ch in self.channels:
            check = getattr(ch, "run_start", None)
            if check is not None:
                check()
        self.seq = seq
        self.next_due = now
        self.due_offset = offset_ms
        self.flags = flags
        self.running = True

    def due(self, now):
        return self.running and ticks_diff(now, self.next_due) >= 0

    def ms_until_due(self, now):
        return ticks_diff(self.next_due, now)

    def sample(self):
        """Read every channel into self.raw / self.fault_mask (2 bits per channel)."""
        mask = 0
        raw = self.raw
        n = self.oversample
        for i in range(self.n):
            ch = self.channels[i]
            raw[i] = ch.read_raw(n)
            mask |= ch.fault << (2 * i)
        self.fault_mask = mask
        return mask

    def step(self, now, store, clock_unset):
        """If a slot is due: sample, stamp, hand the record to the store. Returns True if a
        record was taken. The store may be None (live readings only)."""
        late = ticks_diff(now, self.next_due)
        if not self.running or late < 0:
            return False
        iv = self.interval
        flags = self.flags
        if late >= iv:
            k = late // iv
            self.next_due = ticks_add(self.next_due, k * iv)  # pyright: ignore[reportArgumentType]
            self.due_offset += k * iv
            self.skipped += k
            late -= k * iv
            flags |= lf.REC_SLOTS_SKIPPED
        if self.sample():
            flags |= lf.REC_PROBE_FAULT
        if clock_unset:
            flags |= lf.REC_CLOCK_UNSET
        offset = self.due_offset + late
        if store is not None:
            store.add(self.seq, offset, flags, self.fault_mask, self.raw, now)
        self.last_offset = offset
        self.last_flags = flags
        self.seq += 1
        self.flags = 0
        self.next_due = ticks_add(self.next_due, iv)  # pyright: ignore[reportArgumentType]
        self.due_offset += iv
        return True
