"""Board commands: ``ports``, ``status``, ``clock``, ``start``, ``stop``, ``pull``, ``erase``,
``watch`` and the simulator, ``sim``. Thin: the work is in :mod:`heatlog.device` and
:mod:`heatlog.sim`; a :class:`~heatlog.errors.LinkError` ends as one line."""

from __future__ import annotations

import json
import signal
import sys
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import click

from heatlog.cli.output import emit, json_option

# USB vendor ids of the boards and bridges heatlog runs on (from the vendors' USB id listings)
_VENDORS = {
    0x2E8A: "Raspberry Pi (RP2040/RP2350)",
    0x303A: "Espressif (ESP32 native USB)",
    0x10C4: "Silicon Labs CP210x bridge",
    0x1A86: "WCH CH340 bridge",
    0x0403: "FTDI bridge",
}

port_option = click.option(
    "--port", "-p", required=True, help="Serial port or pyserial URL of the board."
)
baud_option = click.option(
    "--baud", default=115200, show_default=True, help="Baud rate (USB CDC ignores it)."
)
timeout_option = click.option(
    "--timeout", default=1.0, show_default=True, help="Seconds to wait for each reply."
)


def _board(port: str, baud: int, timeout: float) -> Any:
    from heatlog.device.commands import Board
    from heatlog.device.link import Link
    from heatlog.device.portlock import PortLock

    # one heatlog process per port (a `watch` elsewhere would swallow the replies); the lock
    # is held until this command ends
    lock = PortLock(port).acquire()
    click.get_current_context().call_on_close(lock.release)
    return Board(Link.open(port, baudrate=baud, timeout=timeout))


def _on_board(port: str, baud: int, timeout: float, fn: Callable[[Any], Any]) -> Any:
    """Open the board, run ``fn(board)``, close the port whatever happens."""
    b = _board(port, baud, timeout)
    with b.link:
        return fn(b)


def _with_board(fn: Callable[..., Any]) -> Callable[..., Any]:
    fn = timeout_option(baud_option(port_option(fn)))
    return fn


@click.command("ports")
@json_option
def ports(as_json: bool) -> None:
    """List serial ports; boards heatlog knows are marked."""
    from serial.tools import list_ports

    found = []
    for p in sorted(list_ports.comports(), key=lambda p: p.device):
        vendor = _VENDORS.get(p.vid or -1)
        found.append({"port": p.device, "description": p.description, "vid": p.vid, "pid": p.pid,
                      "serial_number": p.serial_number, "likely_board": vendor is not None, "vendor": vendor})  # fmt: skip
    lines = [f"{'*' if f['likely_board'] else ' '} {f['port']}  {f['description']}" for f in found]
    legend = "\n* likely a board" if any(f["likely_board"] for f in found) else ""
    emit(as_json, {"ports": found}, "\n".join(lines) + legend if found else "no serial ports found")


@click.command("status")
@_with_board
@json_option
def status(port: str, baud: int, timeout: float, as_json: bool) -> None:
    """Identify the board: firmware, clock, free space, runs."""
    info, (runs, active) = _on_board(port, baud, timeout, lambda b: (b.identify(), b.list_runs()))
    payload = {
        "board": info.to_dict(),
        "runs": [{"run": r.run, "size": r.size} for r in runs],
        "active": active,
    }

    def text() -> str:
        clock = (
            "not set"
            if info.clock_ms is None
            else time.strftime("%Y-%m-%d %H:%M:%S UTC", time.gmtime(info.clock_ms / 1000))
        )
        lines = [f"board {info.board_id}  firmware {info.firmware}  clock {clock}",
                 f"free {info.free_bytes} of {info.total_bytes} bytes; active run: {active or 'none'}"]  # fmt: skip
        lines += [f"  run {r.run}: {r.size} bytes" for r in runs]
        lines += [f"  config problem: {e}" for e in info.config_errors]
        return "\n".join(lines)

    emit(as_json, payload, text)


@click.command("clock")
@_with_board
@json_option
def clock(port: str, baud: int, timeout: float, as_json: bool) -> None:
    """Set the board's clock from this computer's UTC clock; report its previous offset."""
    t0 = time.time()
    new, prev = _on_board(port, baud, timeout, lambda b: b.set_clock(int(time.time() * 1000)))
    rtt = time.time() - t0  # includes opening the port: an upper bound
    offset = None if prev == 0 else (prev - new) / 1000.0
    payload = {
        "set_to_ms": new,
        "previous_ms": prev or None,
        "previous_offset_s": offset,
        "round_trip_s": rtt,
    }
    text = f"clock set to host UTC ({rtt * 1000:.0f} ms round trip); " + (
        "it was not set before" if offset is None else f"it was {offset:+.3f} s off"
    )
    emit(as_json, payload, text)


def _run_command(name: str, method: str, done: str, doc: str) -> click.Command:
    """``start`` and ``stop``: one board call that answers with a run number."""

    def command(port: str, baud: int, timeout: float, as_json: bool) -> None:
        run = _on_board(port, baud, timeout, lambda b: getattr(b, method)())
        emit(as_json, {"run": run}, f"run {run} {done}")

    command.__doc__ = doc
    return click.command(name)(_with_board(json_option(command)))


start = _run_command(
    "start", "start_run", "started", "Start a new run (set the clock first with `heatlog clock`)."
)
stop = _run_command("stop", "stop_run", "stopped", "Stop the active run.")


class _Progress:
    """Bytes/s and ETA on stderr, one updating line."""

    def __init__(self) -> None:
        self.t0 = time.monotonic()
        self.done0: dict[int, int] = {}
        self.shown = 0.0

    def __call__(self, run: int, done: int, total: int) -> None:
        first = self.done0.setdefault(run, done)
        if done < total and time.monotonic() - self.shown < 0.2:
            return
        self.shown = time.monotonic()
        dt = max(time.monotonic() - self.t0, 1e-6)
        rate = (done - first) / dt
        eta = (total - done) / rate if rate > 0 else float("inf")
        click.echo(
            f"\rrun {run}: {done}/{total} bytes  {rate / 1000:.1f} kB/s  ETA {eta:.0f} s ",
            nl=False,
            err=True,
        )
        if done >= total:
            click.echo("", err=True)
            self.t0 = time.monotonic()


@click.command("pull")
@_with_board
@click.option(
    "--out",
    "out",
    type=click.Path(file_okay=False, path_type=Path),
    required=True,
    help="Archive folder.",
)
@click.option("--run", "runs", type=int, multiple=True, help="Pull only this run (repeatable).")
@click.option("--probes", type=click.Path(file_okay=False, exists=True, path_type=Path), default=None,
              help="Folder of probe files named <probe id>.toml, applied to the CSV export.")  # fmt: skip
@click.option(
    "--window",
    default=4,
    show_default=True,
    type=click.IntRange(1, 16),
    help="Read requests in flight.",
)
@click.option(
    "--progress/--no-progress",
    default=None,
    help="Progress on stderr (default: when stderr is a terminal).",
)
@click.option("--db", "db", envvar="HEATLOG_DB", type=click.Path(dir_okay=False, path_type=Path),
              default=None, help="Run archive that records every verified run "
              "(default: $HEATLOG_DB, else ./heatlog.sqlite).")  # fmt: skip
@click.option("--no-db", is_flag=True, help="Do not record the pulled runs in the run archive.")
@click.option("--give-up-after", "stall_s", type=click.FloatRange(1.0, 3600.0), default=30.0,
              show_default=True, help="Seconds without one intact reply (while the board "
              "answers garbled) before the pull stops; it resumes where it stopped.")  # fmt: skip
@click.option("--strict", is_flag=True, help="Exit with code 4 if a run file is damaged (bad "
              "blocks, records missing, repeated or out of order); the files are still kept.")  # fmt: skip
@json_option
def pull_cmd(port: str, baud: int, timeout: float, out: Path, runs: tuple[int, ...], probes: Path | None,
             window: int, progress: bool | None, db: Path | None, no_db: bool, stall_s: float,
             strict: bool, as_json: bool) -> None:  # fmt: skip
    """Download runs, verify them (chunk CRC + whole-run CRC-32) and archive them read-only.

    Resumes after a fault from the last verified byte; a second pull fetches nothing new. Each
    new run also gets a CSV (raw and, with --probes, calibrated columns) and JSON metadata."""
    from heatlog.device.archive import Archive
    from heatlog.device.export import export_run
    from heatlog.device.pull import pull
    from heatlog.logformat import DamagedLog, LogCorrupt

    show = sys.stderr.isatty() if progress is None else progress
    archive = Archive(out)
    b = _board(port, baud, timeout)
    b.link.stall_s = stall_s
    with b.link:
        report = pull(
            b, archive, runs=runs or None, window=window, progress=_Progress() if show else None
        )
    exports = []
    for e in report.pulled + (report.already if probes else []):
        try:
            csv, meta = export_run(out / e.name, probes)
        except LogCorrupt as exc:  # a header out of range: the file is kept, not exported
            exports.append({"run": e.run, "error": str(exc)})
            continue
        exports.append({"run": e.run, "csv": str(csv), "metadata": str(meta)})
    recorded: list[dict[str, Any]] = []
    if not no_db:
        from heatlog.archive import open_archive, record_pulled_run

        with open_archive(db) as store:
            for e in report.pulled + report.already:
                try:
                    rec = record_pulled_run(store, out / e.name, e.sha256)
                except LogCorrupt as exc:
                    recorded.append({"run": e.run, "error": str(exc)})
                    continue
                recorded.append({"run": e.run, "run_id": rec.run_id, "new": rec.new})
    payload = report.to_dict() | {"exports": exports, "recorded": recorded}

    def text() -> str:
        lines = [f"board {report.board_id}: pulled {len(report.pulled)} run(s), {report.bytes} bytes in {report.seconds:.1f} s; "
                 f"{len(report.already)} already archived"]  # fmt: skip
        lines += [f"  {e.name}  sha256 {e.sha256[:16]}…  {report.damage[e.name]['summary']}"
                  for e in report.pulled]  # fmt: skip
        lines += [f"  {e.name} (already archived)  {report.damage[e.name]['summary']}"
                  for e in report.already if report.damage[e.name]["damaged"]]  # fmt: skip
        lines += [f"  run {r['run']} not recorded in the run archive: {r['error']}"
                  for r in recorded if "error" in r]  # fmt: skip
        lines += [f"  run {s['run']} skipped: {s['reason']}" for s in report.skipped]
        new = [r for r in recorded if r.get("new")]
        if recorded:
            lines.append(
                f"  run archive: {len(new)} new run(s) recorded, {sum(r.get('new') is False for r in recorded)} already there"
            )
        return "\n".join(lines)

    damaged = None
    if strict and report.damaged:
        damaged = DamagedLog(
            f"{len(report.damaged)} archived run file(s) damaged on the board "
            f"({', '.join(report.damaged)}); kept in {out} (--strict)"
        )
        payload.update(error=str(damaged), kind=type(damaged).__name__)  # one JSON object
    emit(as_json, payload, text)
    if damaged is not None:
        if as_json:
            click.get_current_context().exit(damaged.exit_code)
        raise damaged


pull_cmd.name = "pull"


@click.command("erase")
@_with_board
@click.option("--out", "out", type=click.Path(file_okay=False, exists=True, path_type=Path), required=True,
              help="The archive folder that holds the verified copy.")  # fmt: skip
@click.argument("run", type=int)
@json_option
def erase_cmd(port: str, baud: int, timeout: float, out: Path, run: int, as_json: bool) -> None:
    """Erase RUN on the board, only if the archive holds an identical verified copy."""
    from heatlog.device.archive import Archive
    from heatlog.device.pull import erase

    entry = _on_board(port, baud, timeout, lambda b: erase(b, Archive(out), run))
    emit(
        as_json,
        {"erased": run, "archived_as": entry.to_dict()},
        f"run {run} erased; the archive keeps {entry.name}",
    )


erase_cmd.name = "erase"


def uncalibrated_notices(channels: list[dict[str, Any]], probes: Path | None) -> list[str]:
    """One line per channel whose readings are shown raw (no probe file for its probe id)."""
    notices = []
    for i, ch in enumerate(channels):
        if ch["calibrated"] or ch.get("power_monitor"):
            continue
        pid = ch["probe_id"] or "(none)"
        if probes is None:
            why = "no --probes folder given"
        else:
            from heatlog.device.archive import safe_name

            why = f"no probe file {safe_name(pid, limit=64)}.toml in {probes}"
        notices.append(
            f"channel {i} (probe id {pid}) is shown UNCALIBRATED, as raw readings: {why}; "
            "fit one with `heatlog probe fit ... --out DIR/<probe id>.toml`"
        )
    return notices


@click.command("watch")
@_with_board
@click.option("--probes", type=click.Path(file_okay=False, exists=True, path_type=Path), default=None,
              help="Folder of probe files named <probe id>.toml.")  # fmt: skip
@click.option("--seconds", type=float, default=None, help="Stop after this many seconds.")
@click.option("--count", type=int, default=None, help="Stop after this many readings.")
@click.option("--guide", is_flag=True, help="Guide the run on one channel: when the fore-period "
              "is stable enough to start, the running ΔT and when the after-period is enough.")  # fmt: skip
@click.option("--channel", type=click.IntRange(min=0), default=0, show_default=True,
              help="Channel the guide follows.")  # fmt: skip
@click.option("--target-u", type=click.FloatRange(min=0.0, min_open=True), default=None,
              help="Standard uncertainty of ΔT, K, at which the after-period is enough "
              "(default 0.005; common practice, no source).")  # fmt: skip
@click.option("--save", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="With --guide: write the guided readings as a CSV that `heatlog reduce` reads.")  # fmt: skip
@click.option("--stop-when-enough", is_flag=True, help="With --guide: stop at the enough signal.")
@json_option
def watch(
    port: str,
    baud: int,
    timeout: float,
    probes: Path | None,
    seconds: float | None,
    count: int | None,
    guide: bool,
    channel: int,
    target_u: float | None,
    save: Path | None,
    stop_when_enough: bool,
    as_json: bool,
) -> None:
    """Show live readings (raw and, with --probes, calibrated) until Ctrl-C, --seconds or --count.

    With --guide (needs --probes) the run is guided: a signal when the fore-period is stable
    enough to start the experiment, the running corrected ΔT with its uncertainty after the
    event, and a signal when the after-period is long enough; --save keeps the readings."""
    from heatlog.device.live import LiveDecoder
    from heatlog.logformat import LogCorrupt
    from heatlog.report.guide import GuideOptions, LiveGuide

    if guide and probes is None:
        raise click.UsageError("--guide needs --probes to turn readings into temperatures")
    if save is not None and not guide:
        raise click.UsageError("--save goes with --guide")
    live_guide = (
        LiveGuide(GuideOptions(target_u_K=target_u) if target_u else None) if guide else None
    )
    signals: dict[str, float | None] = {"start_s": None, "event_s": None, "enough_s": None}
    b = _board(port, baud, timeout)
    readings: list[dict[str, Any]] = []
    with b.link:
        dec = LiveDecoder(b.get_config(), b.stream(True), probes)
        if live_guide is not None and channel >= len(dec.channels):
            b.stream(False)
            raise click.BadParameter(
                f"the board has {len(dec.channels)} channel(s)", param_hint="--channel"
            )
        notices = uncalibrated_notices(dec.channels_meta(), probes)
        if live_guide is not None and not dec.channels_meta()[channel]["calibrated"]:
            b.stream(False)
            raise click.UsageError(f"--guide cannot follow channel {channel}: {notices[0]}")
        for notice in notices:
            click.echo(f"notice: {notice}", err=True)
        try:
            end = float("inf") if seconds is None else seconds
            for record in b.live_records(end):
                try:
                    r = dec.decode(record)
                except LogCorrupt:
                    continue
                readings.append(r)
                if live_guide is None:
                    if not as_json:
                        click.echo(dec.line(r))
                elif r["temp_C"][channel] is not None:
                    state = live_guide.feed(r["offset_s"], r["temp_C"][channel])
                    for key, value, words in (
                        ("start_s", state.start_signal_s, "STABLE"),
                        ("event_s", state.event_s, "EVENT"),
                        ("enough_s", state.enough_signal_s, "ENOUGH"),
                    ):
                        if value is not None and signals[key] is None:
                            signals[key] = value
                            if not as_json:
                                click.echo(f"{r['offset_s']:10.1f} s  {words}: {state.message}")
                    if not as_json and sys.stdout.isatty():
                        click.echo("\x1b[H\x1b[2J" + live_guide.render(color=True))
                    if stop_when_enough and state.enough:
                        break
                if count is not None and len(readings) >= count:
                    break
        except KeyboardInterrupt:
            pass
        finally:
            b.stream(False)
    payload: dict[str, Any] = {"readings": readings, "channels": dec.channels_meta()}
    payload["notices"] = notices
    if live_guide is not None:
        payload["guide"] = {"signals": signals, "state": live_guide.state.to_dict()}
        if save is not None:
            text = live_guide.csv_text(f"heatlog watch --guide, channel {channel}")
            try:
                save.write_text(text, encoding="utf-8")
            except OSError as exc:
                raise click.FileError(str(save), hint=exc.strerror or "cannot write") from None
            payload["guide"]["saved"] = str(save)
    if as_json:
        emit(True, payload, "")
    elif live_guide is not None:
        st = live_guide.state
        click.echo(f"guide: {st.message}")
        if save is not None:
            click.echo(f"readings saved to {save}; reduce them with `heatlog reduce {save}`")


@click.command("sim")
@click.option("--link", "link_path", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Where to put the symlink to the virtual board's pseudo-terminal (Linux, macOS).")  # fmt: skip
@click.option("--tcp", "tcp_port", type=click.IntRange(0, 65535), default=None,
              help="Serve the board on 127.0.0.1:PORT instead (any system; 0 picks a free port); "
              "open it as --port socket://127.0.0.1:PORT.")  # fmt: skip
@click.option("--scenario", default="demo", show_default=True, help="Invented scenario: demo, calibration, "
              "endothermic, exothermic, hand-warmer, cement.")  # fmt: skip
@click.option(
    "--speed",
    type=click.FloatRange(0.01, 1e6),
    default=1.0,
    show_default=True,
    help="Virtual seconds per real second.",
)
@click.option("--flash", "flash_dir", type=click.Path(file_okay=False, path_type=Path), default=None,
              help="Folder keeping the board's flash between sessions (default: a temporary one).")  # fmt: skip
@click.option("--truth", "truth_path", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="JSON file the simulator keeps updated with the true heat of each run.")  # fmt: skip
@click.option(
    "--board-id", default="sim-1", show_default=True, help="Board id in a fresh flash's config."
)
@click.option("--baud", type=int, default=None, help="Pace the board's output at this baud rate.")
@click.option(
    "--latency-ms",
    type=click.FloatRange(0, 1000),
    default=0.0,
    help="Delay host bytes by this much.",
)
@click.option("--seconds", type=float, default=None, help="Stop after this many real seconds.")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the ADC noise.")
@json_option
def sim(link_path: Path | None, tcp_port: int | None, scenario: str, speed: float, flash_dir: Path | None, truth_path: Path | None,
        board_id: str, baud: int | None, latency_ms: float, seconds: float | None, seed: int, as_json: bool) -> None:  # fmt: skip
    """Run a virtual board (the real firmware) until stopped: on a pseudo-terminal linked at
    --link (Linux, macOS), or on a local TCP socket with --tcp (any system)."""
    import tempfile

    from heatlog.sim.board import PtyServer, TcpServer, VirtualBoard
    from heatlog.sim.linkpath import claim_link_path
    from heatlog.sim.scenarios import scenario as get_scenario

    if (link_path is None) == (tcp_port is None):
        raise click.UsageError(
            "give --link PATH (a pseudo-terminal, Linux/macOS) or --tcp PORT (any system), one of them"
        )
    if link_path is not None:
        claim_link_path(link_path)  # before anything is made: never over an existing file
    scn = get_scenario(scenario)
    tmp = None
    if flash_dir is None:
        tmp = tempfile.TemporaryDirectory(prefix="heatlog-sim-")
        flash_dir = Path(tmp.name)
    board = VirtualBoard(scn, flash_dir, board_id=board_id, seed=seed)
    pacing: dict[str, Any] = {"speed": speed, "baud": baud, "latency_s": latency_ms / 1000,
                              "truth_path": truth_path}  # fmt: skip
    server: PtyServer | TcpServer
    try:
        if tcp_port is not None:
            server = TcpServer(board, tcp_port, **pacing)
            where = f"on {server.url} (open it as --port {server.url})"
        else:
            server = PtyServer(board, link_path, **pacing)
            where = f"on {server.port}, linked at {link_path}"
    except BaseException:
        if tmp is not None:
            tmp.cleanup()
        raise
    if not as_json:
        click.echo(f"virtual board {board_id} ({scn.name}: {scn.description}; invented data) {where}; "
                   f"speed x{speed:g}. Ctrl-C stops.", err=True)  # fmt: skip
        if scn.caution:
            click.echo(scn.caution, err=True)
    elif tcp_port is not None:  # stdout stays one JSON object; the address a host needs on stderr
        click.echo(f"virtual board {board_id} {where}", err=True)
    signal.signal(signal.SIGTERM, lambda *_: server.request_stop())
    try:
        server.serve(seconds)
    except KeyboardInterrupt:
        pass
    finally:
        server.close()
        if tmp is not None:
            tmp.cleanup()
    emit(as_json, board.truth(), lambda: json.dumps(board.truth(), indent=2))
