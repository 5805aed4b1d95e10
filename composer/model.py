"""The animation model: frames of two-colour LED states, UI-free.

An :class:`Animation` holds ``frames``, a ``(frames, rows, cols)`` ``uint8`` array whose values are
LED states (bit 0 red, bit 1 green; both bits = amber), ``durations_ms`` (one integer per frame),
a ``name``, free ``notes`` and the ``profile`` reference it was drawn for.

Frame operations (shift, mirror, rotate, invert, clear, region copy/paste) are pure functions of a
2-D frame returning a new frame; frame-list operations are methods that change the animation in
place. Both raise :class:`~composer.errors.InputError` for impossible requests, so the composer,
the generators and the CLI report them the same way.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError, shorten

__all__ = [
    "OFF", "RED", "GREEN", "AMBER", "STATES", "MAX_FRAMES", "MAX_SIDE", "MAX_LEDS", "MIN_MS", "MAX_MS", "Animation",
    "check_led_count", "shift", "mirror", "rotate", "invert", "clear", "copy_region", "paste_region", "check_frame_array",
    "swap_colours", "ANCHORS", "refit", "size_text", "parse_size",
]

OFF, RED, GREEN, AMBER = 0, 1, 2, 3
STATES = (OFF, RED, GREEN, AMBER)
MAX_FRAMES = 10_000
MAX_SIDE = 256
# LED states in one animation (frames x rows x cols): 256 frames of 256x256, 10,000 frames of 40x40. The two
# limits above alone allowed 655 million, which no command could serve: the check of 100 frames of 256x256
# already takes tens of seconds (tests/bench/bench_load.py --limit, figures in the README).
MAX_LEDS = 1 << 24
MIN_MS = 1
MAX_MS = 3_600_000  # an hour per frame is already a still picture
DEFAULT_MS = 100


def check_frame_array(frames: np.ndarray) -> np.ndarray:
    frames = np.asarray(frames)
    if frames.ndim != 3:
        raise InputError(f"frames must be a (frames, rows, cols) array, got {frames.ndim} dimensions")
    n, rows, cols = frames.shape
    if not 1 <= n <= MAX_FRAMES:
        raise InputError(f"{n} frames: an animation holds 1 to {MAX_FRAMES} frames")
    if not (1 <= rows <= MAX_SIDE and 1 <= cols <= MAX_SIDE):
        raise InputError(f"{size_text(rows, cols)} LEDs: at most {MAX_SIDE}x{MAX_SIDE}")
    check_led_count(n, rows, cols)
    if frames.size and int(frames.max(initial=0)) > AMBER:
        raise InputError("LED states must be 0 (off), 1 (red), 2 (green) or 3 (amber)")
    return frames.astype(np.uint8, copy=False)


def size_text(rows: int, cols: int) -> str:
    """The one way a panel size is written: columns x rows, as the bundled profile names have it
    ("wide-16x8" is 16 columns across and 8 rows down), like a screen's width x height."""
    return f"{cols}x{rows}"


def parse_size(text: str) -> tuple[int, int]:
    """``"16x8"`` (columns x rows, as :func:`size_text` writes it; ``×`` and spaces allowed) to
    ``(rows, cols)``; an InputError says what was expected."""
    parts = text.strip().lower().replace("×", "x").replace(" ", "").split("x")
    # isdecimal, not isdigit: int() refuses digits such as "²" that isdigit takes
    if len(parts) != 2 or not all(p.isdecimal() for p in parts):
        raise InputError(f"{shorten(text.strip(), 20)}: write the size as columns x rows, e.g. 16x8")
    # a side of more than 9 digits is out of range anyway (and int() refuses over 4300 digits)
    cols, rows = (int(p) if len(p) <= 9 else MAX_SIDE + 1 for p in parts)
    if not (1 <= rows <= MAX_SIDE and 1 <= cols <= MAX_SIDE):
        raise InputError(f"{shorten(text.strip(), 20)}: each side is 1 to {MAX_SIDE} LEDs")
    return rows, cols


def check_led_count(frames: int, rows: int, cols: int) -> None:
    if frames * rows * cols > MAX_LEDS:
        raise InputError(f"{frames} frames of {size_text(rows, cols)} LEDs hold {frames * rows * cols:,} LED states, over "
                         f"the {MAX_LEDS:,} an animation may hold (at most {MAX_LEDS // (rows * cols):,} frames of "
                         f"this size)")


def _check_ms(ms: int, where: str = "duration") -> int:
    if isinstance(ms, bool) or not isinstance(ms, (int, np.integer)):
        raise InputError(f"{where} must be a whole number of milliseconds, got {ms!r}")
    if not MIN_MS <= int(ms) <= MAX_MS:
        raise InputError(f"{where} {int(ms)} ms is outside {MIN_MS}..{MAX_MS} ms")
    return int(ms)


@dataclass
class Animation:
    frames: np.ndarray
    durations_ms: np.ndarray
    name: str = "untitled"
    notes: str = ""
    profile: str = "bench-8x8"
    extra: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        self.frames = check_frame_array(self.frames)
        self.durations_ms = np.asarray(self.durations_ms, dtype=np.int64).reshape(-1)
        if self.durations_ms.shape[0] != self.frames.shape[0]:
            raise InputError(f"{self.frames.shape[0]} frames but {self.durations_ms.shape[0]} durations")
        bad = np.flatnonzero((self.durations_ms < MIN_MS) | (self.durations_ms > MAX_MS))
        if bad.size:   # checked as one array; the first bad frame is named
            _check_ms(int(self.durations_ms[bad[0]]), f"frame {int(bad[0])}: duration")

    # -- construction ------------------------------------------------------------------------
    @classmethod
    def blank(cls, rows: int, cols: int, frames: int = 1, ms: int = DEFAULT_MS, **kw) -> "Animation":
        return cls(np.zeros((frames, rows, cols), np.uint8), np.full(frames, ms), **kw)

    def copy(self) -> "Animation":
        return Animation(self.frames.copy(), self.durations_ms.copy(), self.name, self.notes, self.profile,
                         dict(self.extra))

    # -- shape -------------------------------------------------------------------------------
    @property
    def n_frames(self) -> int:
        return int(self.frames.shape[0])

    @property
    def rows(self) -> int:
        return int(self.frames.shape[1])

    @property
    def cols(self) -> int:
        return int(self.frames.shape[2])

    @property
    def total_ms(self) -> int:
        return int(self.durations_ms.sum())

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Animation):
            return NotImplemented
        return (self.frames.shape == other.frames.shape and bool(np.array_equal(self.frames, other.frames))
                and bool(np.array_equal(self.durations_ms, other.durations_ms)) and self.name == other.name
                and self.notes == other.notes and self.profile == other.profile)

    def _index(self, i: int, *, end_ok: bool = False) -> int:
        top = self.n_frames + (1 if end_ok else 0)
        if isinstance(i, bool) or not isinstance(i, (int, np.integer)) or not 0 <= i < top:
            raise InputError(f"frame {i} does not exist (0..{top - 1})")
        return int(i)

    # -- frame list operations (in place) ----------------------------------------------------
    def insert(self, at: int, frame: np.ndarray | None = None, ms: int | None = None) -> None:
        at = self._index(at, end_ok=True)
        if self.n_frames >= MAX_FRAMES:
            raise InputError(f"an animation holds at most {MAX_FRAMES} frames")
        check_led_count(self.n_frames + 1, self.rows, self.cols)
        if frame is None:
            frame = np.zeros((self.rows, self.cols), np.uint8)
        frame = np.asarray(frame, np.uint8)
        if frame.shape != (self.rows, self.cols):
            raise InputError(f"frame is {size_text(*frame.shape)}, the animation is "
                             f"{size_text(self.rows, self.cols)}")
        ms = _check_ms(DEFAULT_MS if ms is None else ms)
        self.frames = np.insert(self.frames, at, frame, axis=0)
        self.durations_ms = np.insert(self.durations_ms, at, ms)

    def duplicate(self, i: int) -> None:
        """Insert a copy of frame ``i`` right after it."""
        i = self._index(i)
        self.insert(i + 1, self.frames[i].copy(), int(self.durations_ms[i]))

    def delete(self, i: int) -> None:
        i = self._index(i)
        if self.n_frames == 1:
            raise InputError("cannot delete the only frame")
        self.frames = np.delete(self.frames, i, axis=0)
        self.durations_ms = np.delete(self.durations_ms, i)

    def move(self, i: int, to: int) -> None:
        """Move frame ``i`` so that it ends up at index ``to``."""
        i, to = self._index(i), self._index(to)
        order = list(range(self.n_frames))
        order.insert(to, order.pop(i))
        self.frames = self.frames[order]
        self.durations_ms = self.durations_ms[order]

    def set_duration(self, indices, ms: int) -> None:
        """Set the duration of one frame or of a selection of frames."""
        ms = _check_ms(ms)
        idx = [self._index(i) for i in ([indices] if isinstance(indices, (int, np.integer)) else indices)]
        self.durations_ms[idx] = ms

    def set_frame(self, i: int, frame: np.ndarray) -> None:
        i = self._index(i)
        frame = np.asarray(frame)
        if frame.shape != (self.rows, self.cols):
            raise InputError(f"frame is {size_text(*frame.shape)}, the animation is {size_text(self.rows, self.cols)}")
        if frame.size and int(frame.max()) > AMBER:
            raise InputError("LED states must be 0..3")
        self.frames[i] = frame


# -- frame operations (pure) -----------------------------------------------------------------
def shift(frame: np.ndarray, d_rows: int, d_cols: int, *, wrap: bool) -> np.ndarray:
    """Move the picture by (d_rows, d_cols); with ``wrap`` what leaves one edge enters the other."""
    if wrap:
        return np.roll(frame, (d_rows, d_cols), axis=(0, 1))
    rows, cols = frame.shape
    out = np.zeros_like(frame)
    src_r = slice(max(0, -d_rows), min(rows, rows - d_rows))
    dst_r = slice(max(0, d_rows), min(rows, rows + d_rows))
    src_c = slice(max(0, -d_cols), min(cols, cols - d_cols))
    dst_c = slice(max(0, d_cols), min(cols, cols + d_cols))
    if src_r.start < src_r.stop and src_c.start < src_c.stop:
        out[dst_r, dst_c] = frame[src_r, src_c]
    return out


def mirror(frame: np.ndarray, axis: str) -> np.ndarray:
    """``axis="horizontal"`` flips left-right; ``"vertical"`` flips top-bottom."""
    if axis == "horizontal":
        return frame[:, ::-1].copy()
    if axis == "vertical":
        return frame[::-1, :].copy()
    raise InputError(f'mirror axis must be "horizontal" or "vertical", not "{axis}"')


def rotate(frame: np.ndarray, quarter_turns: int = 1) -> np.ndarray:
    """Rotate clockwise by quarter turns; only square panels keep their shape."""
    rows, cols = frame.shape
    if rows != cols and quarter_turns % 2:
        raise InputError(f"cannot rotate a {size_text(rows, cols)} panel by a quarter turn: it is not square")
    return np.rot90(frame, -quarter_turns).copy()


def invert(frame: np.ndarray, planes: int = AMBER) -> np.ndarray:
    """Flip the colour planes in ``planes`` (RED, GREEN, or AMBER for both)."""
    if planes not in (RED, GREEN, AMBER):
        raise InputError("invert planes must be red (1), green (2) or both (3)")
    return (frame ^ np.uint8(planes)).astype(np.uint8)


def clear(frame: np.ndarray) -> np.ndarray:
    return np.zeros_like(frame)


def _region(frame: np.ndarray, top: int, left: int, bottom: int, right: int) -> tuple[slice, slice]:
    """Inclusive corners in any order, clipped to the frame."""
    r0, r1 = sorted((top, bottom))
    c0, c1 = sorted((left, right))
    rows, cols = frame.shape
    if r1 < 0 or c1 < 0 or r0 >= rows or c0 >= cols:
        raise InputError("region lies outside the panel")
    return slice(max(r0, 0), min(r1, rows - 1) + 1), slice(max(c0, 0), min(c1, cols - 1) + 1)


def copy_region(frame: np.ndarray, top: int, left: int, bottom: int, right: int) -> np.ndarray:
    rs, cs = _region(frame, top, left, bottom, right)
    return frame[rs, cs].copy()


def paste_region(frame: np.ndarray, clip: np.ndarray, top: int, left: int, *,
                 transparent: bool = False, mask: np.ndarray | None = None) -> np.ndarray:
    """Paste ``clip`` with its top-left corner at (top, left), clipped at the edges. With
    ``transparent``, off LEDs of the clip leave the frame as it was; with ``mask`` (a bool array of
    the clip's shape: LEDs picked by colour), only the masked LEDs are pasted."""
    out = frame.copy()
    rows, cols = frame.shape
    h, w = clip.shape
    r0, c0 = max(top, 0), max(left, 0)
    r1, c1 = min(top + h, rows), min(left + w, cols)
    if r0 >= r1 or c0 >= c1:
        return out
    piece = clip[r0 - top:r1 - top, c0 - left:c1 - left]
    keep = np.ones(piece.shape, bool) if mask is None else mask[r0 - top:r1 - top, c0 - left:c1 - left]
    if transparent:
        keep = keep & (piece != OFF)
    out[r0:r1, c0:c1] = np.where(keep, piece, out[r0:r1, c0:c1])
    return out


def swap_colours(frame: np.ndarray) -> np.ndarray:
    """Red LEDs become green and green red; amber (both) and off stay."""
    return np.array([OFF, GREEN, RED, AMBER], np.uint8)[frame]


ANCHORS = ("top-left", "top", "top-right", "left", "centre", "right", "bottom-left", "bottom", "bottom-right")


def refit(frames: np.ndarray, rows: int, cols: int, anchor: str = "centre") -> np.ndarray:
    """A (frames, rows, cols) stack padded with off LEDs or cropped to a new panel size, keeping the
    ``anchor`` edge or corner in place ("centre" keeps the middle; odd leftovers go right and down)."""
    if anchor not in ANCHORS:
        raise InputError(f'anchor "{anchor}" is not one of {", ".join(ANCHORS)}')
    if not (1 <= rows <= MAX_SIDE and 1 <= cols <= MAX_SIDE):
        raise InputError(f"{size_text(rows, cols)} LEDs: at most {MAX_SIDE}x{MAX_SIDE}")
    n, old_r, old_c = frames.shape

    def offset(old: int, new: int, first: bool, last: bool) -> int:
        return 0 if first else (new - old) if last else int((new - old) / 2)   # toward 0 both ways
    dr = offset(old_r, rows, anchor.startswith("top"), anchor.startswith("bottom"))
    dc = offset(old_c, cols, anchor.endswith("left"), anchor.endswith("right"))
    out = np.zeros((n, rows, cols), np.uint8)
    r0, r1 = max(dr, 0), min(dr + old_r, rows)
    c0, c1 = max(dc, 0), min(dc + old_c, cols)
    out[:, r0:r1, c0:c1] = frames[:, r0 - dr:r1 - dr, c0 - dc:c1 - dc]
    return out
