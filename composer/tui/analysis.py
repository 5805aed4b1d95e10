"""Per-frame results of the electrical engine, kept up to date one frame at a time.

The engine analyses any stack of frames in one vectorised call; the composer calls it on the
whole animation once, then on a one-frame slice after each edit (so a keypress costs one frame's
analysis, not the animation's). Frame-list edits reuse results by frame content, so adding,
moving or duplicating frames re-analyses nothing that was already known. Animation-wide checks
(flash rate, refresh) come from a whole-animation call the app runs in a worker after edits.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..model import Animation
from ..profile import Profile

__all__ = ["FrameResult", "FrameChecks"]

CORNER = "stress"


@dataclass(frozen=True)
class FrameResult:
    row_ma: np.ndarray            # (rows,)
    worst_row: int
    worst_row_ma: float
    pin_ma_max: float
    package_ma_max: float
    supply_peak_ma: float
    supply_avg_ma: float
    ok: bool
    rules: tuple[str, ...]        # broken rules, in the engine's order
    messages: tuple[str, ...]     # one line per violation
    led_uniformity: tuple[float, float] = (float("nan"), float("nan"))   # red, green: dimmest / brightest lit
    utilisation: float = 0.0      # the binding rule's measured / limit (1.0 = at the limit)
    binding: str = ""             # the rule closest to (or furthest over) its limit
    row_use: np.ndarray | None = None   # (rows,) per row, its own parts' highest utilisation


def _per_frame(value, n: int) -> np.ndarray:
    return np.broadcast_to(np.asarray(value, dtype=float), (n,)) if np.ndim(value) <= 1 else np.asarray(value)


def _split(report, n: int) -> list[FrameResult]:
    """Turn one engine report over ``n`` frames into per-frame results."""
    row_ma = np.asarray(report.row_ma, float).reshape(n, -1)
    fields = {name: _per_frame(getattr(report, name), n) for name in
              ("worst_row", "worst_row_ma", "pin_ma_max", "package_ma_max", "supply_peak_ma", "supply_avg_ma")}
    ok = np.broadcast_to(np.asarray(report.frame_ok, bool), (n,))
    evenness = np.asarray(report.led_uniformity, float).reshape(n, 2)
    rules: list[list[str]] = [[] for _ in range(n)]
    messages: list[list[str]] = [[] for _ in range(n)]
    for v in report.violations:
        frame = getattr(v, "frame", None)
        if frame is None or not 0 <= int(frame) < n:
            continue                       # animation-wide findings are shown elsewhere
        rules[int(frame)].append(str(v.rule))
        messages[int(frame)].append(f"{v.rule} {v.where}: {float(v.measured):.1f} {v.unit} > "
                                    f"{float(v.limit):.1f} {v.unit}")
    row_use = np.asarray(report.row_utilisation, float).reshape(n, -1)
    return [FrameResult(row_ma[i].copy(), int(fields["worst_row"][i]), float(fields["worst_row_ma"][i]),
                        float(fields["pin_ma_max"][i]), float(fields["package_ma_max"][i]),
                        float(fields["supply_peak_ma"][i]), float(fields["supply_avg_ma"][i]), bool(ok[i]),
                        tuple(rules[i]), tuple(messages[i]),
                        (float(evenness[i, 0]), float(evenness[i, 1])), float(report.utilisation[i]),
                        report.binding(i), row_use[i].copy()) for i in range(n)]


@dataclass
class FrameChecks:
    profile: Profile
    results: list[FrameResult | None] = field(default_factory=list)
    row_limit_ma: float | None = None
    _by_content: dict[bytes, FrameResult] = field(default_factory=dict)
    analysed_frames: int = 0      # how many frames went through the engine (the benchmark reads it)
    # the summaries below, kept until the results change: every key redraws the frame strip, and
    # a 10,000-frame pattern made each cursor move rebuild 10,000-entry lists
    _summaries: dict[str, object] = field(default_factory=dict)

    def _run(self, frames: np.ndarray, durations: np.ndarray):
        # The stress corner, as rowcast check and the link's guard judge: a frame marked ok here is sent.
        from ..electrical import analyse as _analyse   # imported here: the editor paints before the engine loads
        report = _analyse(frames, durations, self.profile, corner=CORNER)
        self.analysed_frames += frames.shape[0]
        limit = getattr(report, "row_limit_ma", None)
        if limit is not None:
            self.row_limit_ma = float(np.max(limit))
        return report

    def _key(self, frame: np.ndarray, ms: int) -> bytes:
        return frame.tobytes() + int(ms).to_bytes(8, "little")

    def full(self, anim: Animation) -> None:
        """Results for every frame (reusing any frame already analysed with the same content)."""
        keys = [self._key(f, ms) for f, ms in zip(anim.frames, anim.durations_ms.tolist())]
        missing = [i for i, k in enumerate(keys) if k not in self._by_content]
        if missing:
            idx = np.array(missing)
            report = self._run(anim.frames[idx], anim.durations_ms[idx])
            for i, res in zip(missing, _split(report, len(missing))):
                self._by_content[keys[i]] = res
        self.results = [self._by_content[k] for k in keys]
        self._summaries.clear()
        if len(self._by_content) > 4 * max(64, anim.n_frames):   # keep the cache bounded
            live = set(keys)
            self._by_content = {k: v for k, v in self._by_content.items() if k in live}

    def update(self, anim: Animation, index: int) -> None:
        """Re-analyse frame ``index`` only."""
        if len(self.results) != anim.n_frames:
            self.full(anim)
            return
        key = self._key(anim.frames[index], int(anim.durations_ms[index]))
        res = self._by_content.get(key)
        if res is None:
            report = self._run(anim.frames[index:index + 1], anim.durations_ms[index:index + 1])
            res = _split(report, 1)[0]
            self._by_content[key] = res
        if self.results[index] is not res:
            self.results[index] = res
            self._summaries.clear()

    # -- summaries --------------------------------------------------------------------------
    def _summary(self, name: str, make):
        hit = self._summaries.get(name)
        if hit is None:
            hit = self._summaries[name] = make()
        return hit

    def verdicts(self) -> list[str | None]:
        """Per frame: None unknown, "" within limits, else the binding rule (the one furthest over).
        The same list until the results change (do not modify it)."""
        return self._summary("verdicts", lambda: [
            None if r is None else ("" if r.ok else (r.binding or (r.rules[0] if r.rules else "limit")))
            for r in self.results])

    def worst_rows(self) -> np.ndarray:
        return np.array([np.nan if r is None else r.worst_row_ma for r in self.results])

    def utilisations(self) -> np.ndarray:
        """Per frame the binding rule's utilisation (NaN not analysed yet): what the sparkline and
        the frame strip's marks draw, so a frame over any limit always shows as over. The same
        array until the results change (do not modify it)."""
        return self._summary("use", lambda: np.array([np.nan if r is None else r.utilisation
                                                      for r in self.results]))

    def next_bad(self, after: int) -> int | None:
        n = len(self.results)
        for step in range(1, n + 1):
            i = (after + step) % n
            r = self.results[i]
            if r is not None and not r.ok:
                return i
        return None
