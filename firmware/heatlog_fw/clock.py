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


_Y2000 = 946684800  # seconds from 1970-01-01 to 2000-01-01 (the esp32 epoch)
_RTC_VALID_FROM = 2024  # rp2 restarts its RTC at 2021-01-01, esp32 at 2000-01-01 after power-up


def rtc_write(rtc, epoch_ms, gmtime, epoch_year):
    """Copy host time into the RTC (it survives soft and watchdog resets, not power loss).
    gmtime: the port's time.gmtime; epoch_year: time.gmtime(0)[0] (1970, or 2000 on esp32)."""
    secs = epoch_ms // 1000 - (_Y2000 if epoch_year == 2000 else 0)
    t = gmtime(secs)
    rtc.datetime((t[0], t[1], t[2], t[6], t[3], t[4], t[5], 0))


def rtc_read(rtc, mktime, epoch_year):
    """Epoch ms from the RTC if it still holds a host-set time (year >= 2024), else 0.
    Sub-second time is not kept: the result is good to 1 s."""
    y, mo, d, wd, h, mi, s, _ = rtc.datetime()
    if y < _RTC_VALID_FROM:
        return 0
    secs = mktime((y, mo, d, h, mi, s, wd, 0))
    return (secs + (_Y2000 if epoch_year == 2000 else 0)) * 1000
