"""The analysis result: arrays per frame and row, the violations, and the documented JSON."""
from __future__ import annotations

import functools
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from .flash import FlashResult
from .limits import RULES, Violation
from .timing import Timing

__all__ = ["Report", "Verdict", "JSON_FORMAT"]

# /2: frames[] of one object per frame became "frames", one list per key (entry i for frame i), with the
# frame-level violations in one list; each frame's supply_peak_ma (always its worst_row_ma) is left out
JSON_FORMAT = "rowcast-check/2"


def _r(x: float, nd: int = 4) -> float | None:
    x = float(x)
    return None if not np.isfinite(x) else round(x, nd)


def _rl(a: np.ndarray, nd: int = 4) -> list:
    """``_r`` over a whole array at once (a 10,000-frame report calls it for every frame and row):
    rint(x * 10^nd) / 10^nd is the double nearest the rounded decimal, so it prints as short as round()."""
    a = np.asarray(a, dtype=float)
    with np.errstate(invalid="ignore", over="ignore"):
        out = (np.rint(a * 10.0 ** nd) / 10.0 ** nd).tolist()
    finite = np.isfinite(a)
    if finite.all():
        return out
    return np.where(finite, np.array(out, dtype=object), None).tolist()


@dataclass
class Report:
    """What ``analyse`` found. Currents in mA, powers in W, temperatures in C.

    Per frame ``(F,)`` unless noted: ``row_ma`` is ``(F, rows)``; ``led_ma_min`` / ``led_ma_max`` are
    ``(F, 2)`` (red, green; NaN where that colour is not lit).
    """

    profile: str
    corner: str
    durations_ms: np.ndarray
    row_ma: np.ndarray
    worst_row: np.ndarray
    worst_row_ma: np.ndarray
    pin_ma_max: np.ndarray
    package_ma_max: np.ndarray
    supply_peak_ma: np.ndarray
    supply_avg_ma: np.ndarray
    frame_ok: np.ndarray
    row_limit_ma: float
    violations: list[Violation]
    timing: Timing
    flash: FlashResult | None
    led_ma_min: np.ndarray
    led_ma_max: np.ndarray
    driver_tj_c: np.ndarray
    resistor_w_max: np.ndarray
    stuck_scan: np.ndarray                      # (F,) bool: over a continuous rating if the scan stops
    stuck_parts: dict[str, np.ndarray] = field(default_factory=dict)   # part -> (F,) bool
    utilisation: np.ndarray = field(default=None)                       # (F,) binding rule's measured / limit
    # rule id -> (F,) worst measured / limit of that rule (1.0 = at the limit); frame-level rules only
    rule_utilisation: dict[str, np.ndarray] = field(default_factory=dict)
    binding_index: np.ndarray = field(default=None)                     # (F,) index into rule_utilisation
    # (F, 2) dimmest / brightest lit LED of each colour in luminous intensity (NaN: colour unlit), and (2,)
    # over the whole animation (composer.electrical.light.uniformity)
    led_uniformity: np.ndarray = field(default=None)
    led_uniformity_all: np.ndarray = field(default=None)
    # (c1*c1,) bool: which (lit red, lit green) row counts occur, index n_red * (cols + 1) + n_green; it is all
    # an LED current depends on, so other corners' LED ranges need no second pass (engine.led_ma_range_at)
    lit_pairs: np.ndarray | None = field(default=None, repr=False)
    # computed on first use of row_utilisation (the composer's bars need it, a check of 10,000 frames not)
    row_utilisation_of: Callable[[], np.ndarray] | None = field(default=None, repr=False, compare=False)

    @functools.cached_property
    def row_utilisation(self) -> np.ndarray:
        """(F, rows): per row the highest utilisation of the parts that row loads on its own (driver
        channel, supply while on, its LEDs, register pins and packages, a row resistor)."""
        return self.row_utilisation_of()

    @property
    def rules(self) -> tuple[str, ...]:
        """The frame-level rules with a utilisation, in the engine's order."""
        return tuple(self.rule_utilisation)

    def binding(self, index: int) -> str:
        """The rule closest to (or furthest over) its limit in frame ``index``."""
        return self.rules[int(self.binding_index[index])]

    def summary_utilisation(self) -> dict[str, float]:
        """Rule id -> its highest utilisation over the animation."""
        return {rule: float(u.max()) for rule, u in self.rule_utilisation.items()}

    def summary_binding(self) -> str:
        util = self.summary_utilisation()
        return max(util, key=util.__getitem__)

    @property
    def n_frames(self) -> int:
        return int(self.row_ma.shape[0])

    @property
    def ok(self) -> bool:
        return not self.violations

    @property
    def worst_frame(self) -> int:
        return int(np.argmax(self.utilisation))

    def frames_over(self) -> dict[str, int]:
        """Rule id -> number of frames over that limit (frame-level rules)."""
        out: dict[str, set[int]] = {}
        for v in self.violations:
            if v.frame is not None:
                out.setdefault(v.rule, set()).add(v.frame)
        return {rule: len(out[rule]) for rule in RULES if rule in out}

    def frame_violations(self, index: int) -> list[Violation]:
        return [v for v in self.violations if v.frame == index]

    def led_ma_range(self) -> dict[str, list[float | None]]:
        """Lowest and highest lit-LED current of each colour over all frames (None: never lit)."""
        return {c: [_r(np.nanmin(self.led_ma_min[:, k], initial=np.inf)),
                    _r(np.nanmax(self.led_ma_max[:, k], initial=-np.inf))] for k, c in enumerate(("red", "green"))}

    def frames_json(self) -> dict:
        """The per-frame figures as columns: one list per key, entry i for frame i, numbers rounded a whole
        array at a time. A 10,000-frame report is then a few dozen lists, not 10,000 objects of 18 keys
        (three times smaller, and built and written about four times faster)."""
        return {
            "ms": self.durations_ms.tolist(),
            "worst_row": self.worst_row.tolist(),
            "worst_row_ma": _rl(self.worst_row_ma),
            "row_ma": _rl(self.row_ma),
            "pin_ma_max": _rl(self.pin_ma_max),
            "package_ma_max": _rl(self.package_ma_max),
            "supply_avg_ma": _rl(self.supply_avg_ma),
            "led_ma_range": {c: {"min": _rl(self.led_ma_min[:, k]), "max": _rl(self.led_ma_max[:, k])}
                             for k, c in enumerate(("red", "green"))},
            "led_uniformity": {c: _rl(self.led_uniformity[:, k]) for k, c in enumerate(("red", "green"))},
            "driver_tj_c": _rl(self.driver_tj_c, 2),
            "resistor_w_max": _rl(self.resistor_w_max, 6),
            "stuck_scan_over": self.stuck_scan.tolist(),
            "utilisation": {rule: _rl(u) for rule, u in self.rule_utilisation.items()},
            "binding": [self.rules[k] for k in self.binding_index.tolist()],
            "ok": self.frame_ok.tolist(),
            "violations": [v.to_json() for v in self.violations if v.frame is not None],
        }

    def to_json(self) -> dict:
        t = self.timing
        weights = self.durations_ms / self.durations_ms.sum()
        flash = self.flash
        summary = {
            "profile": self.profile,
            "corner": self.corner,
            "ok": self.ok,
            "frames": self.n_frames,
            "frames_ok": int(self.frame_ok.sum()),
            "worst_frame": self.worst_frame,
            "frames_over": self.frames_over(),
            "utilisation": {rule: _r(u) for rule, u in self.summary_utilisation().items()},
            "binding": self.summary_binding(),
            "refresh_hz": _r(t.refresh_hz, 2),
            "duty": _r(t.duty, 6),
            "effective_duty": _r(t.effective_duty, 6),
            "row_period_us": _r(t.row_period_us, 3),
            "shift_us": _r(t.shift_us, 3),
            "row_limit_ma": _r(self.row_limit_ma),
            "supply_peak_ma": _r(self.supply_peak_ma.max()),
            "supply_avg_ma": _r(float((self.supply_avg_ma * weights).sum())),
            "led_ma_range": self.led_ma_range(),
            "led_uniformity": {c: _r(self.led_uniformity_all[k]) for k, c in enumerate(("red", "green"))},
            "driver_tj_max_c": _r(self.driver_tj_c.max(), 2),
            "flicker": {"region": t.flicker_region, "text": t.flicker_text},
            "flash": None if flash is None else {
                "ok": flash.ok, "general_per_s": flash.general_per_s, "red_per_s": flash.red_per_s,
                "worst_per_s": flash.worst_per_s, "message": flash.message},
            "stuck_scan": {
                "frames": np.flatnonzero(self.stuck_scan).tolist(),
                "parts": {part: int(mask.sum()) for part, mask in self.stuck_parts.items()}},
            "violations": [v.to_json() for v in self.violations if v.frame is None],
        }
        return {"format": JSON_FORMAT, "summary": summary, "frames": self.frames_json()}


@dataclass(frozen=True)
class Verdict:
    """The guard's answer for one frame."""

    ok: bool
    reasons: tuple[str, ...]
    violations: tuple[Violation, ...]

    def __bool__(self) -> bool:
        return self.ok
