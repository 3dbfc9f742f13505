"""A probe file's digest: a damaged or edited probe file is refused, not silently used.

``heatlog probe fit`` writes ``digest`` into the file's ``[fit]`` table: the first 16 hex
digits of the SHA-256 of everything else in the file (canonical JSON, numbers as floats). On
reading, a file whose digest no longer matches (a flipped digit in a coefficient, a changed
uncertainty or range) is refused; a file written by hand simply has no digest.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping
from typing import Any


def _canonical(value: Any) -> Any:
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int | float):
        return float(value)
    if isinstance(value, Mapping):
        return {str(k): _canonical(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_canonical(v) for v in value]
    return str(value)  # dates: ISO text


def probe_digest(doc: Mapping[str, Any]) -> str:
    """Digest of a probe file's content (its ``[fit] digest`` itself left out)."""
    body = {k: v for k, v in doc.items() if k != "fit"}
    fit = doc.get("fit", {})
    if isinstance(fit, Mapping):
        body["fit"] = {k: v for k, v in fit.items() if k != "digest"}
    text = json.dumps(_canonical(body), sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
