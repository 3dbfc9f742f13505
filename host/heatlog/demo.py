"""The built-in demonstration: the whole job on a simulated board, invented data throughout.

Scenario: a 10 kΩ NTC bead is calibrated in a water bath (the bundled
``ntc_10k_calibration.csv``); it then sits in a stirred, lidded cup of 150 g of water read by a
virtual board — the real firmware running under the simulator, a 12-bit ratiometric divider
summed over 64 reads. The demo starts the simulator behind a pseudo-terminal (Linux, macOS) or
on a local TCP socket (any system, ``socket://127.0.0.1:PORT``), talks to it through
the same link, framing and protocol code as a real board: sets the clock, logs an electrical
calibration (5 W for 300 s) and the dissolution of 8 g of ammonium nitrate (the salt of many
instant cold packs), pulls both runs with verification into an archive, converts them with the
fitted probe file, and evaluates run files exactly as ``heatlog reduce RUN.toml`` would. The
result is printed beside the heat the simulator really put in.

:func:`run_demo` does all of it and returns a :class:`DemoResult`.
"""

from __future__ import annotations

import datetime as dt
import json
import shutil
import tempfile
import time
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

from heatlog.csvtable import read_columns
from heatlog.device.archive import Archive
from heatlog.device.commands import Board
from heatlog.device.export import export_run
from heatlog.device.link import Link
from heatlog.device.pull import PullReport, pull
from heatlog.errors import LinkError
from heatlog.probes import fit_resistance, probe_from_fit, save_probe
from heatlog.runfile import RunResult, run_file
from heatlog.sim import scenarios as sc
from heatlog.sim.board import PtyServer, TcpServer, VirtualBoard, pty_available

DEMO_PROBE_TRUTH = sc.PROBE_TRUTH  # the invented probe the bundled calibration points came from
SPEED = 2500.0  # virtual seconds per real second
SCENARIO = sc.SCENARIOS["demo"]


@dataclass(frozen=True)
class DemoTruth:
    c_cal_J_per_K: float
    enthalpy_kJ_per_mol: float
    heater_J: float
    simulator: dict[str, Any]


def _calibration_points() -> Path:
    return Path(str(resources.files("heatlog") / "data" / "examples" / "ntc_10k_calibration.csv"))


def _write_probe(out: Path) -> None:
    pts = read_columns(_calibration_points(), ["temp_C", "resistance_ohm"])
    fit = fit_resistance(pts["temp_C"], pts["resistance_ohm"], "steinhart-hart", ref_u_K=0.01)
    probe = probe_from_fit(
        fit,
        sc.PROBE_ID,
        reference="invented reference thermometer, u = 0.01 K",
        calibration_date=dt.date(2026, 11, 30),
    )
    save_probe(probe, out / "probe.toml")
    (out / "probes").mkdir(exist_ok=True)
    save_probe(probe, out / "probes" / f"{sc.PROBE_ID}.toml")


def _log_runs(
    server: PtyServer | TcpServer, archive: Archive, say: Callable[[str], None]
) -> PullReport:
    """Drive the virtual board like a user would: clock, one run per experiment, pull."""
    with Link.open(server.path, timeout=1.0) as link:
        board = Board(link)
        board.identify()
        board.set_clock(int(time.time() * 1000))
        for exp in SCENARIO.experiments:
            run = board.start_run()
            t0 = board.identify().clock_ms or 0
            say(f"  logging run {run}: {exp.title} ({exp.duration_s:.0f} s simulated)")
            end = t0 + int(exp.duration_s * 1000) + SCENARIO.interval_ms
            deadline = time.monotonic() + 10 * exp.duration_s / SPEED + 20
            while (board.identify().clock_ms or 0) < end:
                if time.monotonic() > deadline:
                    raise LinkError("the simulator fell behind; is the machine very busy?")
                time.sleep(0.05)
            board.stop_run(run)
        return pull(board, archive)


def _run_files(
    out: Path, cal_csv: Path, run_csv: Path, chain: str, monitor: dict[str, Any]
) -> None:
    log = f'time_col = "time_s"\nraw_col = "ch0_raw"\nchain = "{chain}"\nprobe = "probe.toml"\n'
    water = f'[[contents]]\nname = "water"\nmass_g = {sc.WATER_G}\nu_mass_g = 0.05\ncp = "water"\n'
    (out / "calibration.toml").write_text(
        "# invented data: heatlog demo (simulated board)\n"
        f'title = "Electrical calibration of the cup: about {sc.HEATER_W:g} W for {sc.HEATER_S:g} s"\n'
        f'[log]\nfile = "{cal_csv.name}"\n{log}\n{water}\n'
        "# the heater's energy: ∫V·I dt from the INA226 logged beside the probe; the shunt's\n"
        "# 0.1 % tolerance taken as a rectangular half-width (u = 0.1 %/√3)\n"
        f'[electrical]\nmonitor = "{monitor["monitor"]}"\nbus_col = "{monitor["bus_col"]}"\n'
        f'shunt_col = "{monitor["shunt_col"]}"\nshunt_ohm = {monitor["shunt_ohm"]}\n'
        "u_shunt_rel = 0.000577\n",
        encoding="utf-8",
    )
    (out / "dissolution.toml").write_text(
        "# invented data: heatlog demo (simulated board)\n"
        f'title = "Cold-pack salt: {sc.NH4NO3_G:g} g ammonium nitrate dissolved in {sc.WATER_G:g} g water"\n'
        f'[log]\nfile = "{run_csv.name}"\n{log}\n'
        '[calorimeter]\ncalibrations = ["calibration.toml"]\n\n'
        f"{water}\n"
        f'[[contents]]\nname = "NH4NO3"\nmass_g = {sc.NH4NO3_G}\nu_mass_g = 0.002\ncp = {sc.NH4NO3_CP}\nu_cp = 0.1\n\n'
        f'[sample]\nname = "NH4NO3"\nmass_g = {sc.NH4NO3_G}\nu_mass_g = 0.002\n'
        'reaction = "NH4NO3(s) -> NH4+(aq) + NO3-(aq)"\n',
        encoding="utf-8",
    )


@dataclass(frozen=True, eq=False)
class DemoResult:
    out: Path
    truth: DemoTruth
    calibration: RunResult
    run: RunResult
    pull: PullReport
    seconds: float

    def to_dict(self) -> dict[str, Any]:
        h = self.run.molar
        c = self.calibration.c_cal
        assert h is not None and c is not None
        return {
            "out": str(self.out),
            "data": "invented data (heatlog demo scenario, simulated board)",
            "enthalpy_kJ_per_mol": h.value,
            "u_enthalpy_kJ_per_mol": h.u,
            "U_enthalpy_kJ_per_mol": h.expanded,
            "true_enthalpy_kJ_per_mol": self.truth.enthalpy_kJ_per_mol,
            "calorimeter_constant_J_per_K": c.value,
            "u_calorimeter_constant_J_per_K": c.u,
            "U_calorimeter_constant_J_per_K": c.expanded,
            "coverage_factor": 2.0,
            "uncertainty_convention": "u_* standard uncertainties (k = 1); U_* expanded (k = 2)",
            "true_calorimeter_constant_J_per_K": self.truth.c_cal_J_per_K,
            "true_heater_J": self.truth.heater_J,
            "simulator": self.truth.simulator,
            "pull": self.pull.to_dict(),
            "seconds": self.seconds,
            "calibration_run": self.calibration.to_dict(),
            "dissolution_run": self.run.to_dict(),
        }


LINKS = ("auto", "pty", "tcp")


def run_demo(
    out: Path, say: Callable[[str], None] = lambda s: None, link: str = "auto"
) -> DemoResult:
    """Simulate, log, pull, calibrate and reduce; files go into ``out``.

    ``link``: how the host reaches the virtual board: ``pty`` (a pseudo-terminal, Linux and
    macOS), ``tcp`` (a local socket, any system) or ``auto`` (the pty where the system has
    one, else TCP)."""
    if link not in LINKS:
        raise ValueError(f"link must be one of {LINKS}, got {link!r}")
    use_pty = link == "pty" or (link == "auto" and pty_available())
    t_start = time.monotonic()
    out.mkdir(parents=True, exist_ok=True)
    _write_probe(out)
    with tempfile.TemporaryDirectory(prefix="heatlog-sim-") as tmp:
        board = VirtualBoard(SCENARIO, Path(tmp) / "flash", board_id="demo-board", seed=7)
        server: PtyServer | TcpServer = (
            PtyServer(board, Path(tmp) / "board.link", speed=SPEED)
            if use_pty
            else TcpServer(board, 0, speed=SPEED)
        ).start()
        say(f"  virtual board on {server.path}")
        try:
            report = _log_runs(server, Archive(out / "archive"), say)
        finally:
            server.close()
        with board.lock:
            truth_sim = board.truth()
    archived = report.pulled + report.already
    if len(archived) < 2:
        raise LinkError(
            "the demo expected two runs from the simulator; delete the output folder and run it again"
        )
    csvs = []
    chain = ""
    monitor: dict[str, Any] = {}
    for entry, name in zip(archived[-2:], ("calibration", "dissolution"), strict=True):
        csv, meta = export_run(
            out / "archive" / entry.name,
            out / "probes",
            note="invented data: heatlog demo (simulated board)",
        )
        shutil.copyfile(csv, out / f"{name}.csv")
        csvs.append(out / f"{name}.csv")
        info = json.loads(meta.read_text())
        chain = info["channels"][0]["chain"]
        if name == "calibration":
            monitor = info["power_monitors"][0]
    _run_files(out, csvs[0], csvs[1], chain, monitor)
    cal = run_file(out / "calibration.toml")
    run = run_file(out / "dissolution.toml")
    truth = DemoTruth(sc.CUP_C_J_PER_K, sc.NH4NO3_DH_KJ, sc.HEATER.total_J, truth_sim)
    return DemoResult(out, truth, cal, run, report, time.monotonic() - t_start)
