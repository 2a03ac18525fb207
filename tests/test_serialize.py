"""JSON of results (voiceband.serialize): numpy arrays become plain lists, non-finite values null."""

from __future__ import annotations

import json
import math

import numpy as np

from voiceband.serialize import dumps_json, to_jsonable


def _by_element(a):
    # Reference: the standard library's own conversion of each element (float/int/bool), with the
    # JSON rule of RFC 8259 section 6 that has no NaN or infinity (they become null).
    if isinstance(a, np.ndarray):
        return [_by_element(v) for v in a] if a.ndim else _by_element(a.item())
    if isinstance(a, (np.bool_, bool)):
        return bool(a)
    if isinstance(a, (np.integer, int)):
        return int(a)
    v = float(a)
    return v if math.isfinite(v) else None


def test_arrays_convert_as_element_by_element():
    rng = np.random.default_rng(3)
    cases = [np.array([1.0, np.nan, np.inf, -np.inf, 2.5]), rng.standard_normal((3, 4)),
             np.array([[1.0, np.nan], [np.inf, 0.0]]), np.arange(5), np.array([True, False]),
             np.zeros(0), np.zeros((2, 0)), np.float32([1.5, np.nan]), np.array(3.0), np.array(np.nan),
             np.int16([-3, 7])]
    for a in cases:
        got = to_jsonable(a)
        assert json.dumps(got) == json.dumps(_by_element(a)), a
        # and the values are Python's own types, so the standard encoder takes them
        json.loads(dumps_json({"a": a}))
