"""Turn result mappings into JSON: NaN becomes null, numpy types become Python types."""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

#: Keys that hold working data, not results (dropped from JSON).
PRIVATE_PREFIX = "_"


def to_jsonable(value: Any) -> Any:
    """Recursively convert numpy scalars/arrays and non-finite floats (to None)."""
    if isinstance(value, dict):
        return {str(k): to_jsonable(v) for k, v in value.items() if not str(k).startswith(PRIVATE_PREFIX)}
    if isinstance(value, (list, tuple)):
        return [to_jsonable(v) for v in value]
    if isinstance(value, np.ndarray):
        return [to_jsonable(v) for v in value.tolist()]
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.bool_):
        return bool(value)
    return value


def dumps(result: dict, indent: int | None = 2) -> str:
    """JSON text of a result mapping (strict JSON: no NaN)."""
    return json.dumps(to_jsonable(result), indent=indent, allow_nan=False)
