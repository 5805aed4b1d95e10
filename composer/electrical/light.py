"""The light of each LED: time-averaged luminous intensity from its current, colour by CIE colorimetry.

Intensity. While its row is on, a die carrying ``I`` mA gives ``Iv(I)``; over the scan the eye sees
the time average ``Iv(I_peak) * effective duty`` (common practice: above about 100 Hz the eye
integrates the pulses, the Talbot-Plateau law). ``Iv`` is proportional to the forward current,
passing through the profile's ``intensity_mcd`` at ``test_current_ma`` (common practice near the test
current), or follows ``relative_intensity_points`` (the datasheet's relative-intensity curve,
interpolated linearly from (0, 0), the last segment extended, scaled to ``intensity_mcd`` at the test
current).

Colour. Each die is taken as monochromatic at its ``dominant_wavelength_nm`` (a point on the CIE 1931
spectrum locus; real red and green LED dies are within a few per cent of full purity, from memory).
Its tristimulus values are ``XYZ = Iv * (x/y, 1, (1-x-y)/y)``; an amber LED is the sum of its red
and green dies. Linear sRGB follows from the IEC 61966-2-1 matrix; colours outside the sRGB gamut
(every spectral colour is) are clipped to it by setting negative components to 0.

Tone mapping. The exposure is fixed per profile: the brightest LED the panel can light at the
stress corner (highest supply, lowest forward voltage: the most current any die can get, over every
count of lit LEDs in a row and both colours and amber) just fills the display (its largest linear
component is 1). Every other LED keeps its luminance ratio to it, which is the same as keeping its
CIE 1976 lightness L* relative to that LED, so a picture at the ``bright`` corner (the dim worst
case) looks dimmer than one at ``typ``. ``lightness`` is that L* (0-100), used where a terminal can
show only a few brightness steps. A preview is not a photometric measurement.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..errors import InputError
from ..profile import COLOURS, Led, Profile
from .colorimetry import cie_lightness, linear_srgb, spectral_xy, srgb_encode, xyz_from_xy
from .solve import count_table
from .timing import scan_timing

__all__ = ["LightModel", "light_model", "die_intensity_mcd", "Lit", "as_lit", "lit_from_currents",
           "uniformity", "OFF_SRGB"]

OFF_SRGB = (46, 40, 36)        # an unlit LED: a dim dot, so the grid stays visible


def die_intensity_mcd(peak_ma, led: Led) -> np.ndarray:
    """Luminous intensity (mcd) of one die while it carries ``peak_ma`` (not yet averaged over the scan).
    Needs ``led.intensity_mcd``; ``relative_intensity_points`` shapes the curve when given."""
    i = np.maximum(np.asarray(peak_ma, float), 0.0)
    mcd = float(led.intensity_mcd or 0.0)
    pts = led.relative_intensity_points
    if not pts:
        return mcd * i / led.test_current_ma
    return mcd * _curve(i, pts) / _curve(np.float64(led.test_current_ma), pts)


def _curve(i: np.ndarray, pts) -> np.ndarray:
    """Piecewise linear from (0, 0) through the points, the last segment extended beyond them."""
    x = np.array([0.0] + [p[0] for p in pts])
    y = np.array([0.0] + [p[1] for p in pts])
    slope = (y[-1] - y[-2]) / (x[-1] - x[-2])
    return np.where(i > x[-1], y[-1] + slope * (i - x[-1]), np.interp(i, x, y))


@dataclass(frozen=True)
class LightModel:
    """One profile's light: per-die constants and the fixed exposure."""

    leds: tuple[Led, Led]            # red, green
    xy: np.ndarray                   # (2, 2) chromaticity of the red and green dies
    rgb_per_mcd: np.ndarray          # (2, 3) linear sRGB per mcd of each die, before exposure
    effective_duty: float
    exposure: float                  # linear sRGB units per mcd-equivalent: brightest LED -> 1.0
    reference_y_mcd: float           # luminance (mcd, time-averaged) of the brightest LED: Yn for L*


def _required(profile: Profile) -> None:
    for colour in COLOURS:
        led = profile.leds[colour]
        for key, typical in (("dominant_wavelength_nm", {"red": "625", "green": "570"}[colour]),
                             ("intensity_mcd", None)):
            if getattr(led, key) is None:
                hint = f" (a typical {colour} die: {typical} nm, from memory)" if typical else \
                    " (the datasheet's typical luminous intensity at the test current)"
                raise InputError(f"missing key, needed for as-lit pictures{hint}", path=profile.source,
                                 where=f"led.{colour}.{key}")


_CACHE: dict[int, tuple[Profile, LightModel]] = {}


def light_model(profile: Profile) -> LightModel:
    """The light constants of ``profile`` (cached per profile object, as the engine caches its tables)."""
    hit = _CACHE.get(id(profile))
    if hit is not None and hit[0] is profile:
        return hit[1]
    model = _light_model(profile)
    if len(_CACHE) > 16:
        _CACHE.pop(next(iter(_CACHE)))
    _CACHE[id(profile)] = (profile, model)
    return model


def _light_model(profile: Profile) -> LightModel:
    _required(profile)
    leds = (profile.leds["red"], profile.leds["green"])
    xy = spectral_xy([led.dominant_wavelength_nm for led in leds])
    rgb_per_mcd = linear_srgb(xyz_from_xy(xy, np.ones(2)))            # (2, 3)
    d = scan_timing(profile).effective_duty
    i_led_ma = count_table(profile, "stress").i_led * 1e3                # (c1, c1, 2), 0 where unlit
    mcd = np.stack([die_intensity_mcd(i_led_ma[..., k], leds[k]) for k in range(2)], axis=-1) * d
    # every LED the panel can light: red alone, green alone, amber (both dies), at every row count
    red, green = mcd[..., 0:1] * [1.0, 0.0], mcd[..., 1:2] * [0.0, 1.0]
    candidates = np.concatenate([red, green, mcd]).reshape(-1, 2)
    rgb = np.clip(candidates @ rgb_per_mcd, 0.0, None)
    top = float(rgb.max())
    if not top > 0.0:
        raise InputError("no LED gives any light (intensity_mcd is 0 at every current)", path=profile.source,
                         where="led.red.intensity_mcd")
    # luminance Y of a die is its luminous intensity (Y = 1 per mcd), so an LED's Y is the sum over its dies
    return LightModel(leds, xy, rgb_per_mcd, d, 1.0 / top, float(candidates.sum(axis=1).max()))


@dataclass(frozen=True)
class Lit:
    """Every LED of some frames, as lit. ``(F, rows, cols)`` arrays unless noted."""

    mcd: np.ndarray             # (F, R, C, 2) time-averaged luminous intensity of the red and green dies
    srgb: np.ndarray            # (F, R, C, 3) uint8 display colour (IEC 61966-2-1); OFF_SRGB where unlit
    lightness: np.ndarray       # CIE 1976 L* relative to the brightest LED the panel can light; 0 where unlit
    lit: np.ndarray             # bool: any die on
    corner: str


def lit_from_currents(frames: np.ndarray, led_ma: np.ndarray, profile: Profile, corner: str) -> Lit:
    """The light of ``frames`` (F, R, C) whose dies carry ``led_ma`` (F, R, C, 2) peak mA (0 where off)."""
    model = light_model(profile)
    frames = np.asarray(frames, np.uint8)
    on = ((frames[..., None] >> np.array([0, 1], np.uint8)) & 1).astype(bool)          # (F, R, C, 2)
    mcd = np.stack([die_intensity_mcd(led_ma[..., k], model.leds[k]) for k in range(2)], axis=-1)
    mcd = np.where(on, mcd * model.effective_duty, 0.0)
    linear = np.clip(mcd @ model.rgb_per_mcd, 0.0, None) * model.exposure
    lit = on.any(axis=-1)
    srgb = np.rint(srgb_encode(linear) * 255.0).astype(np.uint8)
    srgb[~lit] = OFF_SRGB
    lightness = np.where(lit, cie_lightness(mcd.sum(axis=-1) / model.reference_y_mcd), 0.0)
    return Lit(mcd, srgb, lightness, lit, corner)


def as_lit(frames, profile: Profile, corner: str = "typ") -> Lit:
    """The light of every LED of ``frames`` (F, R, C) at ``corner``, from the engine's per-LED currents."""
    from .headroom import led_currents           # here, not at the top: the engine imports this module
    frames = np.asarray(frames, np.uint8)
    return lit_from_currents(frames, led_currents(frames, profile, corner=corner), profile, corner)


def uniformity(led_ma_min: np.ndarray, led_ma_max: np.ndarray, profile: Profile) -> np.ndarray:
    """(F, 2) dimmest / brightest lit die of each colour per frame, in luminous intensity (NaN where a
    colour is unlit). Needs no intensity_mcd: only the shape of the intensity curve matters."""
    out = np.full(np.shape(led_ma_min), np.nan)
    for k, colour in enumerate(COLOURS):
        led = profile.leds[colour]
        shape = led if led.intensity_mcd else _unit_intensity(led)
        lo, hi = die_intensity_mcd(led_ma_min[..., k], shape), die_intensity_mcd(led_ma_max[..., k], shape)
        with np.errstate(invalid="ignore", divide="ignore"):
            out[..., k] = np.where(hi > 0, lo / np.where(hi > 0, hi, 1.0), np.nan)
    return out


def _unit_intensity(led: Led) -> Led:
    return replace(led, intensity_mcd=1.0)
