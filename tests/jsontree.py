"""Two JSON trees compared: the same keys, lengths and words; numbers within a stated tolerance."""

from __future__ import annotations

import math


def assert_same_json(a, b, path=""):
    """Equal JSON trees; numbers to rtol 1e-9, atol 1e-15 (threaded linear algebra moves the last digits between
    processes: seen 2e-8 relative on a current of 2e-13 of full scale through an opened fuse)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and sorted(a) == sorted(b), path
        for k in a:
            assert_same_json(a[k], b[k], f"{path}/{k}")
    elif isinstance(a, (list, tuple)):
        assert isinstance(b, (list, tuple)) and len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            assert_same_json(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(b, bool) and isinstance(b, (int, float)):
        assert math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-15) or (math.isnan(a) and math.isnan(b)), (path, a, b)
    else:
        assert a == b, (path, a, b)
