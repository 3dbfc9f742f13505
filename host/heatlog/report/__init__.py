"""Reports: plots (matplotlib), a self-contained HTML report and the guided live run."""
