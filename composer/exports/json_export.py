"""JSON export: the model, the resolved profile, the wiring bytes and the electrical check report.

Strict JSON (RFC 8259: no NaN or Infinity), keys in a fixed order, so the same pattern gives the
same text. Frames are written as in pattern files, one string per row, one character per LED
(``.`` off, ``r`` red, ``g`` green, ``a`` amber); ``shift`` gives each row slot's bytes in shift
order as hex (from :func:`composer.wiring.shift_bytes`).
"""
from __future__ import annotations

import json
import math
from typing import Any

from ..model import Animation
from ..pattern_file import GLYPHS, frame_to_text
from ..profile import Profile, profile_to_dict
from ..wiring import shift_bytes, shift_order

__all__ = ["EXPORT_FORMAT", "export_document", "export_json", "plain_document", "json_text"]

EXPORT_FORMAT = "rowcast-export/1"


def _plain(obj: Any) -> Any:
    """Numbers JSON can hold: non-finite floats become null (RFC 8259 section 6 has no NaN)."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if hasattr(obj, "tolist"):           # numpy scalars and arrays
        return _plain(obj.tolist())
    return obj


def _report_data(report: Any) -> Any:
    data = report.to_json()
    return json.loads(data) if isinstance(data, (str, bytes)) else data


def export_document(anim: Animation, profile: Profile, report: Any, check: dict | None = None) -> dict[str, Any]:
    """``check``: the check report document (``rowcast check --json --corner typ``'s, which ``export --json``
    writes); without it, the engine's own report."""
    data = shift_bytes(anim.frames, profile)
    return {
        "format": EXPORT_FORMAT,
        "pattern": {
            "name": anim.name,
            "notes": anim.notes,
            "profile": anim.profile,
            "rows": anim.rows,
            "cols": anim.cols,
            "states": {glyph: state for state, glyph in enumerate(GLYPHS)},
            "frames": [{"ms": int(ms), "leds": frame_to_text(frame).split("\n")}
                       for frame, ms in zip(anim.frames, anim.durations_ms)],
        },
        "profile": profile_to_dict(profile),
        "wiring": {
            "bit_order": profile.chain.bit_order,
            "shift_order": [reg.name for reg in shift_order(profile)],
            "shift": [[bytes(row).hex() for row in frame] for frame in data],
        },
        "check": _report_data(report) if check is None else check,
    }


def export_json(anim: Animation, profile: Profile, report: Any) -> str:
    return json_text(plain_document(anim, profile, report))


def plain_document(anim: Animation, profile: Profile, report: Any, check: dict | None = None) -> Any:
    """The document as JSON holds it (lists, strings, finite numbers): what the file must parse back to."""
    return _plain(export_document(anim, profile, report, check))


def json_text(document: Any) -> str:
    return json.dumps(document, indent=1, allow_nan=False) + "\n"
