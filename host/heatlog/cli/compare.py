"""``heatlog compare RUN RUN [...]``: several runs in one HTML page (overlay plot, key figures)."""

from __future__ import annotations

from pathlib import Path

import click

from heatlog.cli.output import emit, json_option


@click.command("compare")
@click.argument("runs", nargs=-1, required=True, type=click.Path(dir_okay=False, path_type=Path))
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path), default=Path("compare.html"),
              show_default=True, help="HTML file to write.")  # fmt: skip
@click.option("--title", default="Runs compared", show_default=True, help="Title of the page.")
@click.option("--time-col", default="time_s", show_default=True, help="Time column (CSV logs).")
@click.option("--temp-col", default="temp_C", show_default=True, help="°C column (CSV logs).")
@json_option
def compare(runs: tuple[Path, ...], out: Path, title: str, time_col: str, temp_col: str,
            as_json: bool) -> None:  # fmt: skip
    """Compare several runs in one HTML page: an overlay plot and a table of key figures.

    Give long-run profiles (run files with [profile]) or cup runs (run files or CSV logs), at
    least two, all of one kind; profiles overlay Q(t), P(t) and T(t), cup runs their thermograms.
    """
    from heatlog.errors import InputError
    from heatlog.report.compare import compare_inputs, key_figures, render_compare_html

    evaluated = compare_inputs(list(runs), time_col=time_col, temp_col=temp_col)
    text = render_compare_html(evaluated, title)
    try:
        out.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise InputError(f"{out}: cannot write ({exc.strerror})") from None
    payload = {
        "report": str(out),
        "runs": [
            {"label": r.label, "source": r.source, "figures": dict(key_figures(r))}
            for r in evaluated
        ],  # fmt: skip
    }

    def lines() -> str:
        rows = [f"comparison of {len(evaluated)} runs written to {out}"]
        for r in evaluated:
            rows.append(f"  {r.label}: " + "; ".join(f"{k} {v}" for k, v in key_figures(r)[:2]))
        return "\n".join(rows)

    emit(as_json, payload, lines)
