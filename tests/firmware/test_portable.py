"""The portable firmware checks (portable_checks.py) under CPython; mp/ runs them under MicroPython."""

import portable_checks
import pytest
from vectorfiles import load_vectors

VECTORS = load_vectors()


@pytest.mark.parametrize("check", portable_checks.CHECKS, ids=lambda f: f.__name__)
def test_portable_check(check):
    check(VECTORS)


def test_power_cut_sweep_covers_torn_variants():
    # header (92) + 10 records (220) + state-file rewrites: the sweep must not shrink silently
    assert portable_checks.check_power_cut_every_byte(VECTORS) > 92 + 10 * 22
