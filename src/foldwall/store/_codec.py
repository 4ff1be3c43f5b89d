"""The run store's canonical JSON: sorted keys, exact floats, tagged non-finite values.

Payloads and metadata are stored as canonical JSON text (sorted keys, no
whitespace) that any JSON reader can parse. Floats are written with ``repr`` and
therefore read back bit for bit. JSON has no NaN or infinity, so a non-finite
float ``x`` is written as the one-key object ``{"$float": tag}``, where ``tag`` is
``"inf"``, ``"-inf"``, ``"nan"`` (the canonical quiet NaN, bits
``0x7ff8000000000000``) or ``"nan:<16 hex digits>"`` for any other NaN bit
pattern. The key ``"$float"`` is therefore reserved in user dictionaries.
"""

from __future__ import annotations

import json
import math
import struct
from collections.abc import Mapping
from typing import Any

import numpy as np

from ..exceptions import SpecError

__all__ = ["dumps", "loads", "FLOAT_TAG"]

_FLOAT_TAG = "$float"
FLOAT_TAG = _FLOAT_TAG
_CANONICAL_NAN_BITS = 0x7FF8000000000000


def _float_tag(value: float) -> str:
    if math.isnan(value):
        bits = struct.unpack("<Q", struct.pack("<d", value))[0]
        return "nan" if bits == _CANONICAL_NAN_BITS else f"nan:{bits:016x}"
    return "inf" if value > 0 else "-inf"


def _float_from_tag(tag: object) -> float:
    if tag == "inf":
        return math.inf
    if tag == "-inf":
        return -math.inf
    bits: int | None = _CANONICAL_NAN_BITS if tag == "nan" else None
    if isinstance(tag, str) and tag.startswith("nan:") and len(tag) == 20:
        try:
            bits = int(tag[4:], 16)
        except ValueError:
            pass
    if bits is not None:
        value: float = struct.unpack("<d", struct.pack("<Q", bits))[0]
        if math.isnan(value):
            return value
    raise ValueError(f"unknown {_FLOAT_TAG} tag {tag!r}")


def _to_plain(obj: object, where: str) -> Any:
    """Return ``obj`` as plain JSON-ready Python objects, with tagged non-finite floats.

    ``where`` names the value in error messages, e.g. ``payload['scores'][3]``.
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, np.floating) and obj.dtype.itemsize > 8:
        raise SpecError(
            f"{where}: cannot store a {type(obj).__name__} without losing precision. "
            "Convert it to float (float64) first."
        )
    if isinstance(obj, (float, np.floating)):
        value = float(obj)  # exact: float16/32/64 all widen to float64 without rounding
        return value if math.isfinite(value) else {_FLOAT_TAG: _float_tag(value)}
    if isinstance(obj, Mapping):
        out: dict[str, Any] = {}
        for key, item in obj.items():
            if not isinstance(key, str):
                raise SpecError(
                    f"{where}: dictionary keys must be str, got {key!r} "
                    f"({type(key).__name__}). JSON would silently turn it into a "
                    "string; convert the key yourself."
                )
            if key == _FLOAT_TAG:
                raise SpecError(
                    f"{where}: the key {_FLOAT_TAG!r} is reserved by the run store "
                    "(it encodes NaN and infinity). Rename the key."
                )
            out[str(key)] = _to_plain(item, f"{where}[{key!r}]")
        return out
    if isinstance(obj, (list, tuple)):
        return [_to_plain(item, f"{where}[{i}]") for i, item in enumerate(obj)]
    if isinstance(obj, np.ndarray):
        return _to_plain(obj.tolist(), where)
    raise SpecError(
        f"{where}: cannot store a value of type {type(obj).__module__}."
        f"{type(obj).__qualname__} ({obj!r:.60}). The store keeps JSON: use None, "
        "bool, int, float, str, lists, dicts with str keys, or numpy scalars/arrays."
    )


def _dumps(obj: object, where: str) -> str:
    # ensure_ascii keeps lone surrogates storable; allow_nan=False is a tripwire: every
    # non-finite float must have been tagged by _to_plain.
    return json.dumps(
        _to_plain(obj, where),
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=True,
        allow_nan=False,
    )


def _object_hook(obj: dict[str, Any]) -> Any:
    if _FLOAT_TAG in obj:
        if len(obj) != 1:
            raise ValueError(f"{_FLOAT_TAG} object with extra keys: {sorted(obj)}")
        return _float_from_tag(obj[_FLOAT_TAG])
    return obj


def _reject_constant(name: str) -> Any:
    raise ValueError(f"bare {name} is not valid store JSON")


def _loads(text: str) -> Any:
    return json.loads(text, object_hook=_object_hook, parse_constant=_reject_constant)


dumps = _dumps
loads = _loads
