"""The light model against published colorimetry and an independent reference library.

Outside references:
- colour-science (a general-purpose colour library, test dependency only): the CIE 1931 2-degree
  colour-matching functions, spectral chromaticity, the sRGB encoding and CIE 1976 lightness.
- IEC 61966-2-1:1999: the sRGB transfer function and its constants, written out again in this file.
- CIE 15:2004 section 8.2.1: L* = 116 (Y/Yn)^(1/3) - 16, with the linear part below (6/29)^3.
- Talbot-Plateau law (common practice): the eye sees the time average of a light flickering above
  the fusion frequency, so the averaged intensity scales with the duty.
"""
from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest

from composer.electrical.colorimetry import (XYZ_TO_LINEAR_SRGB, cie_lightness, cmf_table, linear_srgb,
                                             spectral_xy, srgb_encode)
from composer.electrical.light import (OFF_SRGB, die_intensity_mcd, light_model, lit_from_currents,
                                       uniformity)
from composer.errors import InputError
from composer.profile import bundled_profiles, load_profile, parse_profile
from conftest import PROFILES

with warnings.catch_warnings():
    warnings.simplefilter("ignore")     # colour-science warns that optional plotting packages are absent
    import colour


def _srgb_iec(linear):
    """IEC 61966-2-1:1999 clause 5.2, written here from the standard's formula and constants."""
    c = np.clip(np.asarray(linear, float), 0, 1)
    return np.where(c <= 0.0031308, 12.92 * c, 1.055 * c ** (1 / 2.4) - 0.055)


def test_shipped_cmf_table_equals_the_reference_library():
    ours = cmf_table()
    ref = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    assert ours[0, 0] == 360 and ours[-1, 0] == 830 and ours.shape == (471, 4)
    np.testing.assert_array_equal(ours[:, 0], ref.wavelengths)
    np.testing.assert_allclose(ours[:, 1:], ref.values, rtol=1e-6, atol=1e-12)
    # the standard normalises ybar to 1 at 555 nm (CIE 018:2019)
    assert ours[ours[:, 0] == 555, 2][0] == pytest.approx(1.0)


@pytest.mark.parametrize("nm", [450.0, 470.0, 525.0, 555.0, 570.0, 587.5, 605.0, 625.0, 660.0])
def test_spectral_chromaticity_matches_the_reference_library(nm):
    ref = colour.XYZ_to_xy(colour.wavelength_to_XYZ(np.array([nm])))[0]
    np.testing.assert_allclose(spectral_xy(nm), ref, atol=2e-4 if nm % 1 else 1e-9)


def test_spectral_chromaticity_at_published_points():
    # CIE 1931 spectrum locus, from memory of the standard's chromaticity table: 520 nm (0.0743, 0.8338),
    # 700 nm (0.7347, 0.2653)
    np.testing.assert_allclose(spectral_xy(520.0), [0.0743, 0.8338], atol=2e-4)
    np.testing.assert_allclose(spectral_xy(700.0), [0.7347, 0.2653], atol=2e-4)


def test_srgb_matrix_and_transfer_function_follow_iec_61966_2_1():
    np.testing.assert_allclose(XYZ_TO_LINEAR_SRGB, colour.RGB_COLOURSPACES["sRGB"].matrix_XYZ_to_RGB, atol=1e-4)
    # D65 white (X, Y, Z) = (0.9505, 1.0, 1.0890) (IEC 61966-2-1) is display white
    np.testing.assert_allclose(linear_srgb([0.9505, 1.0, 1.0890]), [1, 1, 1], atol=2e-3)
    x = np.concatenate([np.linspace(0, 0.01, 101), np.linspace(0, 1, 1001), [0.0031308]])
    np.testing.assert_allclose(srgb_encode(x), _srgb_iec(x), rtol=0, atol=1e-12)
    np.testing.assert_allclose(srgb_encode(x), colour.cctf_encoding(x, function="sRGB"), atol=1e-9)
    assert srgb_encode(0.5) == pytest.approx(0.735357, abs=1e-6)    # 1.055 * 0.5^(1/2.4) - 0.055
    np.testing.assert_allclose(srgb_encode([-1.0, 2.0]), [0.0, 1.0], atol=1e-12)   # clipped to the gamut


def test_cie_lightness_at_known_values():
    # CIE 15:2004: L*(1) = 100, L*(0.18) = 49.496 (mid grey), L*((6/29)^3) = 8 where the two parts meet,
    # L* = (29/3)^3 t = 903.3 t below it.
    assert cie_lightness(1.0) == pytest.approx(100.0)
    assert cie_lightness(0.18) == pytest.approx(49.496, abs=1e-3)
    assert cie_lightness((6 / 29) ** 3) == pytest.approx(8.0)
    assert cie_lightness(0.001) == pytest.approx((29 / 3) ** 3 * 0.001)
    y = np.linspace(0, 1, 201)
    np.testing.assert_allclose(cie_lightness(y), colour.colorimetry.lightness_CIE1976(y * 100, 100), atol=1e-9)


def _with_light(text: str, red_points: str = "") -> str:
    return text.replace("intensity_mcd = 6.0", "intensity_mcd = 6.0\n" + red_points, 1)


def test_intensity_is_proportional_to_current_or_follows_the_curve():
    prof = load_profile("bench-8x8")
    red = prof.leds["red"]
    # common practice near the test current: intensity proportional to current, through the datasheet point
    np.testing.assert_allclose(die_intensity_mcd([0, 5, 20, 40], red), [0, 1.5, 6.0, 12.0])
    curved = dataclasses.replace(red, relative_intensity_points=((10.0, 0.55), (20.0, 1.0), (40.0, 1.7)))
    # the curve passes through intensity_mcd at the test current; linear from 0 and past the last point
    np.testing.assert_allclose(die_intensity_mcd([20.0, 10.0, 5.0, 30.0, 60.0], curved),
                               [6.0, 3.3, 1.65, 6.0 * 1.35, 6.0 * 2.4])


def test_profiles_without_light_keys_are_refused_for_as_lit_with_the_key_named(tmp_path):
    text = (PROFILES / "bench-8x8.toml").read_text()
    bare = text.replace("dominant_wavelength_nm = 570.0", "", 1)
    prof = parse_profile(bare, "bare.toml")
    with pytest.raises(InputError) as err:
        light_model(prof)
    assert "bare.toml" in str(err.value) and "led.green.dominant_wavelength_nm" in str(err.value)
    with pytest.raises(InputError, match=r"led\.red\.relative_intensity_points.*fall"):
        parse_profile(_with_light(text, "relative_intensity_points = [[10.0, 0.6], [20.0, 0.5]]"), "p.toml")
    with pytest.raises(InputError, match=r"led\.red\.dominant_wavelength_nm.*at most 780"):
        parse_profile(text.replace("dominant_wavelength_nm = 625.0", "dominant_wavelength_nm = 900.0"), "p.toml")


def _xyz_of(prof, mcd_rg):
    """XYZ of the red and green dies at these intensities, from colour-science's spectral tristimulus values."""
    out = np.zeros(3)
    for k, name in enumerate(("red", "green")):
        spec = colour.wavelength_to_XYZ(np.array([prof.leds[name].dominant_wavelength_nm]))[0]
        out += spec / spec[1] * mcd_rg[k]                        # Y of a die = its luminous intensity
    return out


def _reference_srgb(mcd_rg: np.ndarray, prof, exposure: float) -> np.ndarray:
    """Independent: XYZ from colour-science's spectral tristimulus values, summed, then its XYZ_to_sRGB."""
    xyz = _xyz_of(prof, mcd_rg)
    linear = np.clip(colour.RGB_COLOURSPACES["sRGB"].matrix_XYZ_to_RGB @ xyz, 0, None) * exposure
    return np.rint(_srgb_iec(linear) * 255)


@pytest.mark.parametrize("name", sorted(bundled_profiles()))
def test_rendered_colours_match_the_reference_pipeline(name):
    prof = load_profile(name)
    model = light_model(prof)
    rng = np.random.default_rng(5)
    frames = rng.integers(0, 4, (3, prof.rows, prof.cols)).astype(np.uint8)
    led_ma = rng.uniform(0.5, 30.0, frames.shape + (2,))
    lit = lit_from_currents(frames, led_ma, prof, "typ")
    d = model.effective_duty
    for f, r, c in [(0, 0, 0), (1, 2, 3), (2, prof.rows - 1, prof.cols - 1), (0, 3, 1), (1, 0, 5)]:
        state = frames[f, r, c]
        if not state:
            assert tuple(lit.srgb[f, r, c]) == OFF_SRGB and lit.lightness[f, r, c] == 0
            continue
        on = np.array([state & 1, state >> 1], float)
        mcd = on * np.array([prof.leds["red"].intensity_mcd, prof.leds["green"].intensity_mcd]) \
            * led_ma[f, r, c] / 20.0 * d
        np.testing.assert_allclose(lit.srgb[f, r, c], _reference_srgb(mcd, prof, model.exposure), atol=1)
        np.testing.assert_allclose(lit.lightness[f, r, c],
                                   colour.colorimetry.lightness_CIE1976(mcd.sum() / model.reference_y_mcd * 100,
                                                                        100), rtol=1e-9)


def _hue_deg(rgb) -> float:
    import colorsys
    return colorsys.rgb_to_hsv(*(np.asarray(rgb, float) / 255))[0] * 360


def test_amber_hue_moves_toward_red_as_the_red_current_rises():
    prof = load_profile("bench-8x8")
    frames = np.full((1, 1, 6), 3, np.uint8)
    led_ma = np.zeros((1, 1, 6, 2))
    led_ma[..., 1] = 10.0
    led_ma[0, 0, :, 0] = [2.0, 5.0, 10.0, 15.0, 20.0, 30.0]
    lit = lit_from_currents(frames, led_ma, prof, "typ")
    hues = [_hue_deg(lit.srgb[0, 0, c]) for c in range(6)]
    assert all(a > b for a, b in zip(hues, hues[1:])), hues        # red is hue 0
    # and the chromaticity walks along the line from green towards red (CIE 1931: mixtures lie on it)
    x = [colour.XYZ_to_xy(_xyz_of(prof, lit.mcd[0, 0, c]))[0] for c in range(6)]
    assert all(a < b for a, b in zip(x, x[1:]))




def test_lower_duty_is_dimmer_at_the_same_peak_current():
    # Talbot-Plateau (common practice): the eye sees peak x on-time share; halving the on-time of each
    # row slot (blanking half of it) halves the light at the same peak current
    prof = load_profile("bench-8x8")
    t = prof.scan.row_period_us
    halved = dataclasses.replace(prof, scan=dataclasses.replace(prof.scan, blanking_us=t / 2))
    one = np.ones((1, 8, 8), np.uint8)
    ma = np.full((1, 8, 8, 2), 10.0)
    full = lit_from_currents(one, ma, prof, "typ").mcd[..., 0]
    half = lit_from_currents(one, ma, halved, "typ").mcd[..., 0]
    np.testing.assert_allclose(full, 6.0 * 10 / 20 * (1 / 8) * (t - prof.scan.blanking_us) / t)
    np.testing.assert_allclose(half, 6.0 * 10 / 20 * (1 / 8) * 0.5)


def test_uniformity_is_the_intensity_ratio():
    prof = load_profile("shared-8x8")
    lo, hi = np.array([[4.0, np.nan]]), np.array([[20.0, np.nan]])
    out = uniformity(lo, hi, prof)
    assert out[0, 0] == pytest.approx(0.2) and np.isnan(out[0, 1])
    curved = dataclasses.replace(prof, leds={**prof.leds, "red": dataclasses.replace(
        prof.leds["red"], relative_intensity_points=((4.0, 0.3), (20.0, 1.0)))})
    assert uniformity(lo, hi, curved)[0, 0] == pytest.approx(0.3)


def test_check_json_has_led_uniformity_per_frame(tmp_path, capsys):
    from composer.cli import main
    from composer.model import Animation
    from composer.pattern_file import save_pattern
    import json
    anim = Animation.blank(8, 8, name="u", profile="shared-8x8")
    anim.frames = np.zeros((2, 8, 8), np.uint8)
    anim.durations_ms = np.array([100, 100])
    anim.frames[0, 0, 0] = 1                      # a lone red LED and a full red row: uneven
    anim.frames[0, 1, :] = 1
    anim.frames[1, 2, :] = 2                      # one full green row: even
    pat = tmp_path / "u.rowcast.toml"
    save_pattern(anim, pat)
    main(["check", str(pat), "--json", "--corner", "typ"])
    doc = json.loads(capsys.readouterr().out)
    frames = doc["frames"]
    lo, hi = frames["led_ma_range"]["red"]["min"][0], frames["led_ma_range"]["red"]["max"][0]
    assert frames["led_uniformity"]["red"][0] == pytest.approx(lo / hi, abs=1e-4) and lo / hi < 0.3
    assert frames["led_uniformity"]["green"][0] is None
    assert [u[1] for u in frames["led_uniformity"].values()] == [None, 1.0]
    assert doc["summary"]["led_uniformity"]["red"] == pytest.approx(lo / hi, abs=1e-4)


def test_randomised_light_keys_match_the_reference_pipeline():
    from composer.electrical.light import as_lit
    base = load_profile("bench-8x8")
    rng = np.random.default_rng(23)
    for trial in range(6):
        leds = {}
        for name in ("red", "green"):
            pts = None
            if trial % 2:
                xs = np.sort(rng.choice(np.arange(2, 60), 3, replace=False)).astype(float)
                ys = np.sort(rng.uniform(0.1, 2.0, 3))
                pts = tuple(zip(xs.tolist(), ys.tolist()))
            leds[name] = dataclasses.replace(base.leds[name], dominant_wavelength_nm=float(rng.uniform(450, 680)),
                                             intensity_mcd=float(rng.uniform(0.5, 50)),
                                             relative_intensity_points=pts)
        prof = dataclasses.replace(base, leds=leds)
        model = light_model(prof)
        frames = rng.integers(0, 4, (2, 8, 8)).astype(np.uint8)
        led_ma = rng.uniform(0.5, 30.0, frames.shape + (2,))
        lit = lit_from_currents(frames, led_ma, prof, "typ")
        for f, r, c in zip(*np.nonzero(frames)):
            on = np.array([frames[f, r, c] & 1, frames[f, r, c] >> 1], float)
            mcd = on * np.array([_datasheet_curve(leds[k], led_ma[f, r, c, i])
                                 for i, k in enumerate(("red", "green"))]) * model.effective_duty
            np.testing.assert_allclose(lit.srgb[f, r, c], _reference_srgb(mcd, prof, model.exposure), atol=1)
        # the documented exposure: a lone LED at the stress corner is the brightest and fills the display
        lone = np.zeros((3, 8, 8), np.uint8)
        lone[:, 0, 0] = [1, 2, 3]
        assert as_lit(lone, prof, "stress").srgb[:, 0, 0].max() == 255


def _datasheet_curve(led, i_ma: float) -> float:
    """Independent reading of the profile keys: mcd at the test current, scaled by the relative curve
    (linear from 0 through the points, the last segment extended) or by current."""
    if not led.relative_intensity_points:
        return led.intensity_mcd * i_ma / led.test_current_ma
    pts = [(0.0, 0.0)] + list(led.relative_intensity_points)

    def rel(i):
        for (x0, y0), (x1, y1) in zip(pts, pts[1:]):
            if i <= x1:
                return y0 + (y1 - y0) * (i - x0) / (x1 - x0)
        (x0, y0), (x1, y1) = pts[-2], pts[-1]
        return y1 + (y1 - y0) * (i - x1) / (x1 - x0)
    return led.intensity_mcd * rel(i_ma) / rel(led.test_current_ma)
