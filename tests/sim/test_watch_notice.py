"""`heatlog watch` never shows raw readings as if they were temperatures without saying so."""

import json

import pytest
from click.testing import CliRunner

from heatlog.cli import main
from heatlog.sim.board import PtyServer


@pytest.fixture
def port(board, tmp_path):
    server = PtyServer(board, tmp_path / "board.link", speed=20.0).start()
    yield str(tmp_path / "board.link")
    server.close()


def test_a_probes_folder_without_the_channels_probe_file_is_announced(port, tmp_path):
    empty = tmp_path / "probes"
    empty.mkdir()
    r = CliRunner().invoke(
        main, ["watch", "--port", port, "--probes", str(empty), "--count", "2", "--json"]
    )
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)  # the notice goes to stderr: the JSON stays one object
    assert not d["channels"][0]["calibrated"]
    assert d["notices"] and "UNCALIBRATED" in d["notices"][0]
    assert "demo-ntc-1.toml" in r.stderr and str(empty) in r.stderr


def test_without_probes_the_raw_readings_are_announced(port):
    r = CliRunner().invoke(main, ["watch", "--port", port, "--count", "1"])
    assert r.exit_code == 0, r.output
    assert "UNCALIBRATED" in r.stderr and "no --probes folder" in r.stderr


def test_the_guide_refuses_a_channel_it_cannot_calibrate(port, tmp_path):
    empty = tmp_path / "probes"
    empty.mkdir()
    r = CliRunner().invoke(
        main, ["watch", "--port", port, "--probes", str(empty), "--guide", "--count", "2"]
    )
    assert r.exit_code == 2 and "--guide cannot follow channel 0" in r.output
