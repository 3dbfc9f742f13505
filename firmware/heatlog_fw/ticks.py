"""Wrap-safe millisecond ticks: the board's own, or an exact CPython model of them (period 2**30)."""

try:
    from time import ticks_add, ticks_diff, ticks_ms  # noqa: F401  # pyright: ignore
except ImportError:
    import time as _time

    _PERIOD = 1 << 30
    _HALF = 1 << 29

    def ticks_ms():
        return int(_time.monotonic() * 1000) & (_PERIOD - 1)  # pyright: ignore[reportAttributeAccessIssue]

    def ticks_add(t, delta):
        return (t + delta) & (_PERIOD - 1)

    def ticks_diff(a, b):
        return ((a - b + _HALF) & (_PERIOD - 1)) - _HALF


try:
    from time import sleep_ms  # noqa: F401  # pyright: ignore
except ImportError:

    def sleep_ms(ms):
        _time.sleep(ms / 1000)
