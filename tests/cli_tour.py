"""Run every heatlog command once, in this process, on the real standard streams.

Used by tests/test_portability.py in a subprocess (under PYTHONIOENCODING=cp1252 or ascii, or
with the POSIX-only modules hidden): ``python tests/cli_tour.py WORKDIR``. Each command's text
output (and --help of every command and group) goes to the real stdout/stderr of this process,
so the stream's encoding is the one a user's pipe would have. After each command a marker line
``=== exit N: ARGS`` goes to stdout; ``WORKDIR/tour.json`` lists every command path toured.
The board commands talk to ``heatlog sim --tcp`` started as a child process. Invented data
throughout (the demo's scenario, the simulator, synthetic profile runs).
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import time
import traceback
from pathlib import Path

import click
import numpy as np

from heatlog.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "host" / "heatlog" / "data" / "examples" / "ntc_10k_calibration.csv"
toured: list[list[str]] = []
failures: list[str] = []


def heatlog(*args: str, ok: bool = True) -> None:
    """Run ``heatlog ARGS`` as a user's shell would (click's standalone mode)."""
    args = tuple(str(a) for a in args)
    code: object = 0
    try:
        main.main(args=list(args), prog_name="heatlog", standalone_mode=True)
    except SystemExit as exc:
        code = exc.code if exc.code is not None else 0
    except BaseException:  # a traceback is exactly what must never happen
        traceback.print_exc()
        code = "traceback"
    sys.stdout.flush()
    sys.stderr.flush()
    print(f"=== exit {code}: {' '.join(args)}", flush=True)
    toured.append([a for a in args if not a.startswith("-")])
    if (code == 0) != ok or code == "traceback":
        failures.append(f"{' '.join(args)}: exit {code}")


def command_paths(cmd: click.Command = main, path: tuple[str, ...] = ()) -> list[tuple[str, ...]]:
    out = [path]
    if isinstance(cmd, click.Group):  # list_commands/get_command: the lazy group loads them
        ctx = click.Context(cmd)
        for name in cmd.list_commands(ctx):
            sub = cmd.get_command(ctx, name)
            if sub is not None:
                out += command_paths(sub, (*path, name))
    return out


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def main_tour(work: Path) -> None:
    work.mkdir(parents=True, exist_ok=True)
    db = ["--db", str(work / "runs.sqlite")]
    # every command's help, groups included
    heatlog("--version")
    for path in command_paths():
        heatlog(*path, "--help")

    # the demo first: its files feed the commands that need input
    demo = work / "demo"
    heatlog("demo", "--out", demo, "--link", os.environ.get("TOUR_DEMO_LINK", "tcp"))
    heatlog("reduce", demo / "dissolution.toml")
    heatlog("reduce", demo / "dissolution.toml", "--json")
    heatlog("reduce", work / "missing.toml", ok=False)
    heatlog("probe", "fit", EXAMPLE, "--model", "steinhart-hart", "--ref-u", "0.01")
    heatlog("probe", "convert", "--standard", "pt100", "--ohm", "110")
    heatlog("probe", "convert", "--probe", demo / "probe.toml", "--temp", "25")
    heatlog("probe", "design", "--beta", "3950", "--r25", "10000", "--range", "0", "60")
    heatlog("calibrate", "electrical", "--voltage", "12", "--u-voltage", "0.01", "--current",
            "1.5", "--u-current", "0.005", "--on", "60", "--off", "360", "--u-seconds", "0.5",
            "--delta-t", "2.4", "--u-delta-t", "0.01", "--water-g", "500", "--u-water-g", "0.1",
            "--cp", "4.18", "--u-cp", "0.004")  # fmt: skip
    heatlog("calibrate", "mixing", "--hot-g", "50", "--hot-c", "60", "--cold-g", "50",
            "--cold-c", "20", "--final-c", "38.5", "--u-mass", "0", "--u-temp", "0.1", "--cp",
            "4.18", "--u-cp", "0")  # fmt: skip
    red = work / "reduce.json"
    red.write_text(json.dumps({"delta_t_K": 122.88 / 465.0, "u_delta_t_K": 0.002}))
    heatlog("calibrate", "reaction", "--reference", "tris-hcl", "--amount", "0.5",
            "--u-amount", "0.0002", "--reduce-json", red, "--water-g", "100", "--u-water-g",
            "0.05", "--cp", "4.15", "--u-cp", "0.01", "--temp", "25")  # fmt: skip
    heatlog("calibrate", "combine", "150:1", "160:2", "152:4")
    heatlog("hess", "NH4NO3(s) -> NH4+(aq) + NO3-(aq)")
    heatlog("hess", "H+(aq) + OH-(aq) -> H2O(l)", "--measured", "-56.2", "--u-measured", "0.8")

    from heatlog.profile.synthetic import warmer_run

    run = warmer_run()
    warmer = work / "warmer.csv"
    rows = np.column_stack([run.time_s, run.temp_C, run.env_C])
    np.savetxt(warmer, rows, delimiter=",", header="time_s,temp_C,room_C", comments="",
               fmt="%.6f")  # fmt: skip
    heatlog("profile", warmer, "--heat-capacity", "60", "--u-heat-capacity", "1", "--loss",
            "0.06", "--u-loss", "0.002", "--env-col", "room_C", "--kind", "warmer",
            "--sample-g", "40", "--u-sample-g", "0.05")  # fmt: skip
    heatlog("report", demo / "dissolution.toml", "--out", work / "report.html")

    # the first-hour tools: templates, a probe's time constant, a box, exports, a comparison
    for kind in ("cup", "calibration", "profile"):
        heatlog("new", kind, work / f"new-{kind}.toml")
    t = np.arange(0.0, 120.0, 0.5)
    plunge = np.where(t < 10.0, 21.0, 60.0 + (21.0 - 60.0) * np.exp(-(t - 10.0) / 4.0))
    np.savetxt(work / "plunge.csv", np.column_stack([t, plunge]), delimiter=",",
               header="time_s,temp_C", comments="", fmt="%.5f")  # fmt: skip
    heatlog("probe", "tau", work / "plunge.csv")
    heatlog(
        "box",
        "fit",
        warmer,
        "--cooling",
        "--env-col",
        "room_C",
        "--heat-capacity",
        "60",
        "--u-heat-capacity",
        "1",
        "--start",
        "20000",
        ok=False,
    )  # a warmer still releases heat
    heatlog("export", "thermogram", demo / "dissolution.toml", "--out", work / "thermo.csv")
    profile_toml = work / "warmer.toml"
    profile_toml.write_text(
        '# invented data\n[log]\nfile = "warmer.csv"\n[profile]\nheat_capacity_J_per_K = 60.0\n'
        "u_heat_capacity_J_per_K = 1.0\nloss_W_per_K = 0.06\nu_loss_W_per_K = 0.002\n"
        'env_col = "room_C"\nkind = "warmer"\n',
        encoding="utf-8",
    )
    heatlog("export", "profile", profile_toml, "--out", work / "profile.csv")
    heatlog("compare", demo / "calibration.toml", demo / "dissolution.toml", "--out",
            work / "compare.html")  # fmt: skip
    board_cfg = work / "board.json"
    heatlog(
        "board", "config", "new", "--variant", "divider", "--board", "rp2040", "--out", board_cfg
    )
    heatlog("board", "config", "check", board_cfg, "--board", "rp2040")
    heatlog("board", "install", "--port", "loop://", "--config", board_cfg, ok=False)  # no board

    # the run archive
    heatlog("probes", "add", demo / "probe.toml", *db)
    heatlog("probes", "list", *db)
    heatlog("runs", "import", demo / "dissolution.toml", "--date", "2026-12-01", *db)
    heatlog("runs", "list", *db)
    heatlog("runs", "show", "1", *db)
    heatlog("runs", "reduce", "1", *db)
    heatlog("runs", "rereduce", "--probe", "demo-ntc-1", *db)
    heatlog("runs", "export", "1", "--out", work / "export", *db)

    # the board commands, against the simulator on a local TCP socket
    heatlog("ports")
    tcp = free_port()
    sim = subprocess.Popen(
        [sys.executable, "-m", "heatlog", "sim", "--tcp", str(tcp), "--speed", "100",
         "--seconds", "300"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE,
    )  # fmt: skip
    url = f"socket://127.0.0.1:{tcp}"
    try:
        for _ in range(600):
            try:
                socket.create_connection(("127.0.0.1", tcp), timeout=1).close()
                break
            except OSError:
                time.sleep(0.05)
        time.sleep(0.3)  # the probe connection above is gone before the first command
        heatlog("status", "--port", url)
        heatlog("clock", "--port", url)
        heatlog("start", "--port", url)
        heatlog("watch", "--port", url, "--count", "3", "--probes", demo / "probes")
        heatlog("stop", "--port", url)
        heatlog("pull", "--port", url, "--out", work / "pulled", *db)
        heatlog("erase", "--port", url, "--out", work / "pulled", "1")
    finally:
        sim.terminate()
        out, err = sim.communicate(timeout=60)
    sys.stdout.flush()
    sys.stdout.buffer.write(out)
    sys.stdout.buffer.flush()
    sys.stderr.buffer.write(err)
    print(f"=== exit {0 if out.strip() else 'no output'}: sim --tcp {tcp}", flush=True)
    toured.append(["sim"])


if __name__ == "__main__":
    where = Path(sys.argv[1])
    main_tour(where)
    (where / "tour.json").write_text(
        json.dumps({"toured": toured, "failures": failures,
                    "commands": [list(p) for p in command_paths()]}),
        encoding="utf-8",
    )  # fmt: skip
