"""Exports: C tables matching the wiring, GIF/PNG previews, JSON (model plus check report)."""
from .c_tables import LAYOUTS, c_header, c_identifier, check_prefix
from .check import check_report
from .json_export import export_json
from .preview import frame_image, gif_bytes, gif_delays_ms, png_sheet_bytes

__all__ = ["LAYOUTS", "c_header", "c_identifier", "check_prefix", "check_report", "export_json", "frame_image",
           "gif_bytes", "gif_delays_ms", "png_sheet_bytes"]
