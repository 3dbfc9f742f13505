"""Re-reduction after a recalibration changes results exactly as the calibration change predicts.

Prediction (exact algebra, see archive_data): the v1 → v2 change of a linear RTD's R0 and A maps
every temperature through t₂ = b·t₁ + a. The reduction (drift fits, corrections, budget) is
affine-equivariant, so the corrected ΔT, the heat (q = C·ΔT with C fixed) and ΔH all scale by b
(1 − b = 3.6e-3). Tolerances: 1e-7 relative for the closed-form corrections (Regnault–Pfaundler);
1e-5 for the chosen result, which may be the Newton-model fit, whose least-squares stopping
tolerance leaves a few 1e-6 (measured here: 2.4e-6).
"""

import pytest
from archive_data import (
    A_1,
    A_2,
    R0_1,
    R0_2,
    SLOPE,
    invented_run,
    log_bytes,
    probe_toml,
    write_run_file,
)

from heatlog.archive import (
    add_calibration_file,
    applicable,
    import_path,
    open_archive,
    reduce_run,
    rereduce_probe,
)
from heatlog.probes import parse_probe


@pytest.fixture
def lab(tmp_path):
    (tmp_path / "p1.toml").write_text(probe_toml("pt-1", "2026-10-01", R0_1, A_1))
    (tmp_path / "p2.toml").write_text(probe_toml("pt-1", "2026-11-15", R0_2, A_2))
    t, sums = invented_run(5)
    # board clock anchor 1 780 000 000 000 ms = 2026-05-28 UTC: before the recalibration
    (tmp_path / "early.bin").write_bytes(
        log_bytes("b-1", 3, ["pt-1"], sums, (t * 1000).astype(int))
    )
    late = write_run_file(tmp_path, "late", 7, "p1.toml")
    archive = open_archive(tmp_path / "a.sqlite")
    add_calibration_file(archive, tmp_path / "p1.toml")
    early_id = import_path(archive, tmp_path / "early.bin").run_id
    late_id = import_path(archive, late, "2026-12-01").run_id
    yield archive, tmp_path, early_id, late_id
    archive.close()


def test_the_probe_change_is_the_straight_line_the_prediction_uses():
    p1 = parse_probe(probe_toml("pt-1", "2026-10-01", R0_1, A_1))
    p2 = parse_probe(probe_toml("pt-1", "2026-11-15", R0_2, A_2))
    for r in (100.0, 108.0, 115.0):
        t1 = float(p1.model.resistance_to_temperature(r))
        t2 = float(p2.model.resistance_to_temperature(r))
        assert t2 == pytest.approx(SLOPE * t1 + (R0_1 / R0_2 - 1) / A_2, abs=1e-9)


def test_rule_rereduces_only_runs_after_the_new_calibration(lab):
    archive, folder, early, late = lab
    reduce_run(archive, early)
    old = reduce_run(archive, late)
    added = add_calibration_file(archive, folder / "p2.toml")
    assert added.supersedes is not None and added.supersedes.calibration_date == "2026-10-01"
    assert applicable(archive, "pt-1", "2026-05-28")[0].calibration_date == "2026-10-01"
    assert applicable(archive, "pt-1", "2026-12-01")[0].id == added.calibration.id

    result = rereduce_probe(archive, "pt-1")
    assert result.unchanged == (early,)
    assert [c.run_id for c in result.compared] == [late]
    changes = {c.quantity: c for c in result.compared[0].changes}
    for name in ("ΔT corrected", "heat q", "ΔH molar", "ΔH per gram"):
        ch = changes[name]
        assert ch.new == pytest.approx(SLOPE * ch.old, rel=1e-5), name
        assert ch.change_in_u == pytest.approx(ch.change / ch.u_old)
    assert changes["ΔT corrected"].old == pytest.approx(old.results["delta_t_K"])
    new = result.compared[0].new
    assert {c["calibration_id"] for c in new.calibrations} == {added.calibration.id}
    assert "supersede rule" in new.reason
    # nothing left to do: the second pass finds every run on its rule calibration
    again = rereduce_probe(archive, "pt-1")
    assert again.compared == () and set(again.unchanged) == {early, late}


def test_chosen_calibration_applies_to_every_run_of_the_probe(lab):
    archive, folder, early, late = lab
    before = reduce_run(archive, early)
    v2 = add_calibration_file(archive, folder / "p2.toml").calibration
    result = rereduce_probe(archive, "pt-1", v2.id)
    by_run = {c.run_id: c for c in result.compared}
    assert set(by_run) == {early}  # late was never reduced: reduced now, nothing to compare
    assert result.first == (late,)
    dt = {c.quantity: c for c in by_run[early].changes}["ΔT corrected"]
    assert dt.old == pytest.approx(before.results["delta_t_K"])
    assert dt.new == pytest.approx(SLOPE * dt.old, rel=1e-5)
    rp_old = before.results["methods"]["regnault-pfaundler"]
    rp_new = by_run[early].new.results["methods"]["regnault-pfaundler"]
    assert rp_new == pytest.approx(SLOPE * rp_old, rel=1e-7)
    assert by_run[early].new.inputs["fixed"] == {"pt-1": v2.id}


def test_rereduce_refuses_a_calibration_of_another_probe(lab, tmp_path):
    archive, folder, *_ = lab
    (folder / "other.toml").write_text(probe_toml("pt-9", "2026-10-01", R0_1, A_1))
    other = add_calibration_file(archive, folder / "other.toml").calibration
    with pytest.raises(ValueError, match="belongs to probe pt-9"):
        rereduce_probe(archive, "pt-1", other.id)
