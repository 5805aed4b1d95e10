"""Generators: patterns made from images, from text, and the wiring test for a new panel."""
from .bringup import bringup_animation
from .image_import import import_image
from .pattern_ref import profile_ref_for
from .text_scroll import text_animation

__all__ = ["bringup_animation", "import_image", "profile_ref_for", "text_animation"]
