"""Wall clock set by the host: epoch milliseconds (1970, UTC) kept as an integer anchor plus
ticks, so nothing depends on the board's RTC epoch (2000 on esp32) or its power-up date."""

from .ticks import ticks_add, ticks_diff

_REBASE_MS = 86400000  # keep ticks_diff far inside its +-6.2 day range


class Clock:
    def __init__(self):
        self.base_ms = 0
        self.base_ticks = 0
        self.is_set = False
        self.sets = 0

    def set(self, epoch_ms, now):
        """Returns the previous reading (0 if never set)."""
        prev = self.now_ms(now)
        self.base_ms = epoch_ms
        self.base_ticks = now
        self.is_set = True
        self.sets += 1
        return prev

    def now_ms(self, now):
        """Epoch ms now, or 0 if the host never set the clock since boot."""
        if not self.is_set:
            return 0
        d = ticks_diff(now, self.base_ticks)
        if d > _REBASE_MS:
            self.base_ms += d
            self.base_ticks = ticks_add(self.base_ticks, d)  # pyright: ignore[reportArgumentType]
            d = 0
        return self.base_ms + d
