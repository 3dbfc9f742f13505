"""Plain JSON from heatlog's results: the one cleaner every ``--json`` and every archive record uses.

A leaf module (it imports nothing from heatlog), so the CLI and the archive both depend on it and
never on each other.
"""

from __future__ import annotations

import dataclasses
import math
import os
from typing import Any

import numpy as np


def jsonable(obj: Any) -> Any:
    """Turn numpy values, dataclasses and paths into plain JSON; NaN and inf become null."""
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return jsonable(dataclasses.asdict(obj))
    if hasattr(obj, "to_dict") and callable(obj.to_dict):
        return jsonable(obj.to_dict())
    if isinstance(obj, dict):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [jsonable(v) for v in obj.tolist()]
    if isinstance(obj, np.generic):
        return jsonable(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, os.PathLike):
        return os.fsdecode(obj)
    return obj
