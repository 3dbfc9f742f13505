"""Hints that point where the user is: a reduction error read from a run file names the run
file's keys, not the command-line options of ``heatlog reduce FILE.csv``."""

from __future__ import annotations

import re
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from heatlog.errors import ReductionError

# command-line option → the run file's key in its [reduce] table (runfile._REDUCE_KEYS)
RUN_FILE_KEYS = {"--event-start": "event_start_s", "--after-start": "after_start_s"}
_GIVE = re.compile(r"give (--event-start|--after-start)(?: and (--event-start|--after-start))?")


def for_run_file(message: str, path: str | Path) -> str:
    """``message`` with "give --event-start" turned into the run file's own key."""

    def swap(match: re.Match[str]) -> str:
        keys = " and ".join(RUN_FILE_KEYS[o] for o in match.groups() if o)
        return f"set {keys} in the [reduce] table of {Path(path).name}"

    return _GIVE.sub(swap, message)


@contextmanager
def run_file_hints(path: str | Path) -> Iterator[None]:
    """Re-raise a :class:`ReductionError` with its option hints retold for the run file."""
    try:
        yield
    except ReductionError as exc:
        told = for_run_file(str(exc), path)
        if told == str(exc):
            raise
        raise ReductionError(told) from None
