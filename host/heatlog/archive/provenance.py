"""A run's provenance: what ``heatlog runs show`` traces and ``heatlog runs export`` writes.

The trace follows a result back to its raw file (path, size, SHA-256 — verified against the
bytes on disk when it is built) and to every calibration applied (probe id, calibration date,
model, coefficients, reference, uncertainty, probe-file SHA-256). The export adds the texts
needed to reproduce the result elsewhere: the run file, every probe file applied, the run files
it depends on, and optionally the raw bytes themselves (base64).
"""

from __future__ import annotations

import base64
from typing import Any

from heatlog import __version__
from heatlog.archive.calibrations import calibration
from heatlog.archive.db import Archive
from heatlog.archive.reductions import reductions_of
from heatlog.archive.runs import raw_bytes, run_record

EXPORT_FORMAT = "heatlog-run-export/1"


def trace(archive: Archive, run_id: int) -> dict[str, Any]:
    """The run, its raw file (checksum verified now), and its reductions with calibrations."""
    run = run_record(archive, run_id)
    raw_bytes(run)  # raises ChecksumMismatch naming the file if it changed
    reductions = reductions_of(archive, run_id)
    return {
        "run": run.to_dict(with_text=False),
        "raw_file": {
            "path": run.raw_path,
            "sha256": run.raw_sha256,
            "size_bytes": run.raw_size,
            "verified": True,
        },
        "reductions": [r.to_dict() for r in reductions],
        "latest": None if not reductions else reductions[-1].to_dict(),
    }


def export_run(archive: Archive, run_id: int, *, include_raw: bool = False) -> dict[str, Any]:
    """Everything needed to reproduce the run's results elsewhere (JSON-ready)."""
    out = trace(archive, run_id)
    run = run_record(archive, run_id)
    cal_ids = sorted({c["calibration_id"] for r in out["reductions"] for c in r["calibrations"]})
    out["format"] = EXPORT_FORMAT
    out["exported_by"] = f"heatlog {__version__}"
    out["run_file_text"] = run.run_file_text
    out["probe_files"] = [calibration(archive, i).to_dict(with_text=True) for i in cal_ids]
    out["dependencies"] = [
        export_run(archive, dep, include_raw=include_raw) for dep in run.dependencies
    ]
    if include_raw:
        out["raw_file"]["base64"] = base64.b64encode(raw_bytes(run)).decode("ascii")
    return out
