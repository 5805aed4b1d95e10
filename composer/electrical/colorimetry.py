"""Published colorimetry the light model needs: CIE 1931 chromaticity, sRGB, CIE 1976 lightness.

- Colour-matching functions: the CIE 1931 2-degree standard colorimetric observer (CIE 018:2019,
  ISO/CIE 11664-1:2019), tabulated 360-830 nm in 1 nm steps in ``composer/data/cie1931_2deg_cmf.csv``
  (shipped in the wheel; where the numbers came from is written at the top of the file). Between
  table points the functions are interpolated linearly, as CIE 15:2004 allows for 1 nm data.
- sRGB: IEC 61966-2-1:1999 (D65 white): the XYZ -> linear RGB matrix and the piecewise transfer
  function (12.92 * L below 0.0031308, else 1.055 * L^(1/2.4) - 0.055).
- CIE 1976 lightness: L* = 116 f(Y/Yn) - 16 with f(t) = t^(1/3) above (6/29)^3 and
  t / (3 (6/29)^2) + 4/29 below (CIE 15:2004, section 8.2.1).
"""
from __future__ import annotations

from functools import lru_cache
from importlib import resources

import numpy as np

__all__ = ["CMF_FILE", "cmf_table", "spectral_xyz", "spectral_xy", "xyz_from_xy", "XYZ_TO_LINEAR_SRGB",
           "linear_srgb", "srgb_encode", "cie_lightness", "WAVELENGTH_RANGE_NM"]

CMF_FILE = "cie1931_2deg_cmf.csv"
WAVELENGTH_RANGE_NM = (360.0, 830.0)

# IEC 61966-2-1:1999, clause 5.2 (CIE XYZ, D65, -> linear sRGB), to the four decimals it publishes.
XYZ_TO_LINEAR_SRGB = np.array([[3.2406, -1.5372, -0.4986],
                               [-0.9689, 1.8758, 0.0415],
                               [0.0557, -0.2040, 1.0570]])


@lru_cache(maxsize=1)
def cmf_table() -> np.ndarray:
    """(471, 4): wavelength nm, xbar, ybar, zbar."""
    text = resources.files("composer").joinpath("data", CMF_FILE).read_text(encoding="ascii")
    rows = [line.split(",") for line in text.splitlines() if line and not line.startswith(("#", "nm"))]
    table = np.array(rows, dtype=float)
    table.setflags(write=False)
    return table


def spectral_xyz(wavelength_nm) -> np.ndarray:
    """(..., 3) tristimulus values xbar, ybar, zbar of monochromatic light (linear interpolation)."""
    t = cmf_table()
    w = np.asarray(wavelength_nm, float)
    return np.stack([np.interp(w, t[:, 0], t[:, k]) for k in (1, 2, 3)], axis=-1)


def spectral_xy(wavelength_nm) -> np.ndarray:
    """(..., 2) CIE 1931 chromaticity (x, y) of monochromatic light: a point on the spectrum locus."""
    xyz = spectral_xyz(wavelength_nm)
    return xyz[..., :2] / xyz.sum(axis=-1, keepdims=True)


def xyz_from_xy(xy, luminance) -> np.ndarray:
    """(..., 3) XYZ of a colour with chromaticity ``xy`` (..., 2) and luminance Y (...)."""
    xy = np.asarray(xy, float)
    y_lum = np.asarray(luminance, float)
    x, y = xy[..., 0], xy[..., 1]
    return np.stack([x / y * y_lum, y_lum, (1.0 - x - y) / y * y_lum], axis=-1)


def linear_srgb(xyz) -> np.ndarray:
    """(..., 3) linear sRGB of XYZ (Y = 1 is the display's white); values outside [0, 1] are out of gamut."""
    return np.asarray(xyz, float) @ XYZ_TO_LINEAR_SRGB.T


def srgb_encode(linear) -> np.ndarray:
    """IEC 61966-2-1 transfer function: linear light 0..1 -> encoded sRGB value 0..1."""
    c = np.clip(np.asarray(linear, float), 0.0, 1.0)
    return np.where(c <= 0.0031308, 12.92 * c, 1.055 * np.power(c, 1.0 / 2.4) - 0.055)


_DELTA = 6.0 / 29.0


def cie_lightness(y_relative) -> np.ndarray:
    """CIE 1976 L* (0..100) of luminance relative to the reference white (Y / Yn)."""
    t = np.maximum(np.asarray(y_relative, float), 0.0)
    f = np.where(t > _DELTA ** 3, np.cbrt(t), t / (3 * _DELTA ** 2) + 4.0 / 29.0)
    return 116.0 * f - 16.0
