"""Frame actions of the editor: stepping, adding, moving, durations, playing on screen.

A mixin of :class:`~composer.tui.editor.EditorScreen`.
"""
from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

from ..model import MAX_MS, MIN_MS
from .dialogs import AskText

__all__ = ["FrameActions"]


class FrameActions(_Editor):
    def _show_frame(self, index: int) -> None:
        self.session.goto_frame(index)
        self.redraw()
        self.query_one("#link-pane").frame_edited(self.session.frame)

    def action_frame(self, step: int) -> None:
        self._stop_play()
        n = self.session.anim.n_frames
        self._show_frame((self.session.current + step) % n)

    def action_first_frame(self) -> None:
        self._stop_play()
        self._show_frame(0)

    def action_last_frame(self) -> None:
        self._stop_play()
        self._show_frame(self.session.anim.n_frames - 1)

    def action_add_frame(self) -> None:
        self.run_edit(self.session.add_frame)

    def action_duplicate_frame(self) -> None:
        self.run_edit(self.session.duplicate_frame)

    def action_delete_frame(self) -> None:
        self.run_edit(self.session.delete_frame)

    def action_move_frame(self, delta: int) -> None:
        self.run_edit(self.session.move_frame, delta)

    def action_select_frame(self) -> None:
        self.session.toggle_selected()
        n = len(self.session.selected)
        self.say(f"{n} frame{'s' if n != 1 else ''} picked: frame and picture edits work on them" if n else
                 "no frames picked")
        self.redraw(readout=False)

    def action_pick_range(self) -> None:
        self.say(self.session.pick_range())
        self.redraw(readout=False)

    def action_pick_all(self) -> None:
        self.say(self.session.pick_all())
        self.redraw(readout=False)

    def action_copy_frames(self) -> None:
        self.say(self.session.copy_frames())

    def action_paste_frames(self) -> None:
        self.run_edit(self.session.paste_frames)

    def action_reverse_frames(self) -> None:
        self.run_edit(self.session.reverse_frames)

    def action_duration(self) -> None:
        targets = self.session.duration_targets()
        now = int(self.session.anim.durations_ms[targets[0]])
        what = f"frame {targets[0]}" if len(targets) == 1 else f"{len(targets)} picked frames"

        def check(text: str) -> str | None:
            if not text.isdigit() or not MIN_MS <= int(text) <= MAX_MS:
                return f"type a whole number of milliseconds, {MIN_MS} to {MAX_MS}"
            return None

        def done(value: str | None) -> None:
            if value:
                self.run_edit(self.session.set_duration, int(value))

        self.app.push_screen(AskText("Duration", f"milliseconds for {what}", str(now), check=check,
                                     id="ask-duration"), done)

    def action_next_bad(self) -> None:
        i = self.checks.next_bad(self.session.current)
        if i is None:
            self.say("every frame is within the limits")
            return
        self._stop_play()
        self._show_frame(i)
        self.say(f"frame {i} is over a limit")

    # -- playing (display only: the model is not touched) -----------------------------------
    def action_play(self) -> None:
        if self.playing:
            self._stop_play()
            self.say("paused")
        else:
            self.playing = True
            self.say("playing: p pauses")
            self._play_next(advance=False)

    def _play_next(self, advance: bool = True) -> None:
        if not self.playing:
            return
        s = self.session
        if advance:
            s.goto_frame((s.current + 1) % s.anim.n_frames)
            self.redraw()
        ms = int(s.anim.durations_ms[s.current])
        self._play_timer = self.set_timer(ms / 1000.0, self._play_next)

    def _stop_play(self) -> None:
        if self._play_timer is not None:
            self._play_timer.stop()
            self._play_timer = None
        if self.playing:
            self.playing = False
            self.redraw(readout=False)

