"""The run archive: probes and their calibration history, runs, reductions, in one SQLite file.

``schema.py`` (tables and ordered migrations), ``db.py`` (opening, WAL, transactions),
``rawfiles.py`` (SHA-256 on record and on read), ``calibrations.py`` (calibration history and the
supersede rule), ``runs.py`` (importing board logs and run files; :func:`record_pulled_run` for
the pull code), ``reductions.py`` (reduce with provenance, re-reduce after a recalibration),
``provenance.py`` (trace and export).
"""

from heatlog.archive.calibrations import (
    Calibration,
    add_calibration_file,
    add_calibration_text,
    applicable,
    history,
)
from heatlog.archive.db import Archive, ArchiveError, default_db_path, open_archive
from heatlog.archive.provenance import export_run, trace
from heatlog.archive.rawfiles import ChecksumMismatch
from heatlog.archive.reductions import (
    ReductionRecord,
    Rereduction,
    reduce_run,
    rereduce_probe,
    thermogram_from_log,
)
from heatlog.archive.runs import (
    ImportedRun,
    RunRecord,
    import_device_log,
    import_path,
    import_run_file,
    list_runs,
    record_pulled_run,
    run_record,
)
from heatlog.archive.schema import MIGRATIONS, SCHEMA_VERSION, migrate

__all__ = [
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "Archive",
    "ArchiveError",
    "Calibration",
    "ChecksumMismatch",
    "ImportedRun",
    "ReductionRecord",
    "Rereduction",
    "RunRecord",
    "add_calibration_file",
    "add_calibration_text",
    "applicable",
    "default_db_path",
    "export_run",
    "history",
    "import_device_log",
    "import_path",
    "import_run_file",
    "list_runs",
    "migrate",
    "open_archive",
    "record_pulled_run",
    "reduce_run",
    "rereduce_probe",
    "run_record",
    "thermogram_from_log",
    "trace",
]
