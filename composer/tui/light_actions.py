"""As-lit view of the editor: the canvas and the device preview shaded by the light model.

A mixin of :class:`~composer.tui.editor.EditorScreen`. The light comes from
``composer.electrical.light.as_lit`` (the same function the GIF/PNG previews use) at the chosen
corner; the canvas draws it (:func:`~composer.tui.canvas.lit_shades`).
"""
from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..errors import RowcastError
from .canvas import lit_shades

if TYPE_CHECKING:
    from .editor import EditorScreen as _Editor
else:
    _Editor = object

__all__ = ["LightActions"]


class LightActions(_Editor):
    lit_corner: str | None = None           # None: flat (every lit LED alike); else the corner shown

    def lit_shade(self, frame: np.ndarray) -> np.ndarray | None:
        """Shades for ``frame`` as lit at the chosen corner, or None when the view is flat."""
        if self.lit_corner is None:
            return None
        from ..electrical.light import as_lit     # the light model loads when first asked for (start-up)
        lit = as_lit(np.asarray(frame, np.uint8)[None], self.session.profile, self.lit_corner)
        return lit_shades(lit, 0, true_colour=self.canvas.true_colour)

    def _set_lit(self, corner: str | None) -> None:
        if corner is not None:
            from ..electrical.light import light_model
            try:
                light_model(self.session.profile)          # the profile's light keys, or a one-line error
            except RowcastError as err:
                self.say(f"as lit: {err}", error=True)
                self.app.bell()
                return
        self.lit_corner = corner
        self.query_one("#link-pane").set_shader(self.lit_shade if corner is not None else None)
        self.redraw(full=True)
        if corner is None:
            self.say("flat view: every lit LED alike")
        else:
            steps = "" if self.canvas.true_colour else ", lightness in 3 steps"
            self.say(f"as lit, {corner} corner{steps}: a preview, not a photometric measurement")

    def action_as_lit(self) -> None:
        self._set_lit(None if self.lit_corner is not None else "typ")

    def action_lit_corner(self) -> None:
        now = self.lit_corner
        from ..electrical import CORNERS
        self._set_lit(CORNERS[(CORNERS.index(now) + 1) % len(CORNERS)] if now is not None else "typ")
