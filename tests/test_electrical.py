"""The electrical engine against hand calculation, published standards and facts of the trade.

Each check names its source beside it. "common practice" marks a fact of the trade with no single
source; "from memory" marks a value recalled from typical datasheets.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from composer.electrical import analyse, firmware_lit_limit, guard
from composer.electrical.design import with_resistors
from composer.electrical.diode import Diode, VT, fit_diode
from composer.electrical.drivers import DropModel, allowable_peak_ma, drop_model
from composer.electrical.preferred import SERIES, is_preferred, round_up
from composer.electrical.solve import Circuit, circuit_for, solve_rows
from composer.electrical.timing import flicker_region, scan_timing
from composer.errors import InputError
from composer.profile import RowDriver, load_profile, parse_profile
from tests.conftest import PROFILES


@pytest.fixture(scope="module")
def bench():
    return load_profile("bench-8x8")


def _fixed_drop_diode(vf: float, at_a: float) -> Diode:
    """A very steep diode (n = 0.12: 3 mV per e-fold) whose drop is exactly ``vf`` at ``at_a``: the
    fixed-forward-drop limit of hand calculation, anchored at the hand-computed current."""
    n = 0.12
    return Diode(at_a / math.expm1(vf / (n * VT)), n, 0.0)


def _circuit(vs: float, v0: float, r_drv: float, vf: tuple[float, float], r_branch: tuple[float, float],
             at_a: tuple[float, float], r_row: float = 0.0) -> Circuit:
    drv = DropModel("linear", fixed_v=v0, r_ohm=r_drv)
    return Circuit("typ", vs, (_fixed_drop_diode(vf[0], at_a[0]), _fixed_drop_diode(vf[1], at_a[1])),
                   r_branch, (r_branch[0], r_branch[1]), r_row, drv, drv.with_series(r_row))


# ------------------------------------------------------------------------------------------------
# Ohm's and Kirchhoff's laws, fixed forward drop (hand-computable)
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("n_lit", [1, 4, 8, 16])
def test_column_resistors_match_hand_calculation(n_lit):
    # Ohm + KVL around one branch, KCL at the row node: Vs - v0 - r*(N*I) - Vf - R*I = 0
    # => I = (Vs - v0 - Vf) / (R + N*r). Values chosen so the answer is easy to check by hand.
    expected = (5.0 - 1.0 - 2.0) / (100.0 + n_lit * 0.5)
    c = _circuit(5.0, 1.0, 0.5, (2.0, 2.0), (100.0, 100.0), (expected, expected))
    s = solve_rows(n_lit, 0, c)
    assert float(s.i_led[0]) == pytest.approx(expected, rel=1e-9)
    assert float(s.i_row) == pytest.approx(n_lit * expected, rel=1e-9)     # KCL at the row node


def test_shared_row_resistor_hogging_matches_hand_calculation():
    # Row placement: node V = Vs - v0 - (r + R_row) * (nr*Ir + ng*Ig), Ic = (V - Vf_c) / r_on.
    # With Vf red 1.8 V, green 2.2 V, r_on 20 ohm, R_row 10 ohm, r 0, v0 1 V, Vs 5 V, 2 red + 2 green:
    # V = 4 - 10*(2(V-1.8)/20 + 2(V-2.2)/20) = 4 - (V-1.8) - (V-2.2) => 3V = 8 => V = 8/3.
    v = 8.0 / 3.0
    ir, ig = (v - 1.8) / 20.0, (v - 2.2) / 20.0
    c = _circuit(5.0, 1.0, 0.0, (1.8, 2.2), (20.0, 20.0), (ir, ig), r_row=10.0)
    s = solve_rows(2, 2, c)
    assert float(s.i_led[0]) == pytest.approx(ir, rel=1e-9)
    assert float(s.i_led[1]) == pytest.approx(ig, rel=1e-9)
    assert float(s.i_led[0]) > 1.8 * float(s.i_led[1])                     # the lower-Vf colour hogs (13/7)


def test_nothing_lit_is_zero(bench):
    report = analyse(np.zeros((3, 8, 8), np.uint8), [100, 100, 100], bench, corner="stress")
    assert report.ok
    assert not report.row_ma.any() and not report.supply_avg_ma.any() and not report.package_ma_max.any()
    assert report.driver_tj_c == pytest.approx(bench.row_driver.ambient_c)


def test_more_lit_leds_share_the_driver_drop(bench):
    # Row-node coupling: each extra LED adds driver drop, so every LED's current falls a little.
    c = circuit_for(bench, "typ")
    s = solve_rows(np.arange(1, 17), 0, c)
    led = s.i_led[:, 0]
    assert np.all(np.diff(led) < 0) and np.all(np.diff(s.i_row) > 0)


def test_corners_order_the_currents(bench):
    frame = np.zeros((1, 8, 8), np.uint8)
    frame[0, 2, :] = 3
    ma = {c: analyse(frame, [100], bench, corner=c).pin_ma_max[0] for c in ("bright", "typ", "stress")}
    assert ma["bright"] < ma["typ"] < ma["stress"]


def test_diode_fit_reproduces_the_datasheet_points(bench):
    for colour in ("red", "green"):
        led = bench.leds[colour]
        d = fit_diode(led, f"led.{colour}")
        for i_ma, v in led.iv_points:
            assert float(d.voltage(i_ma * 1e-3)) == pytest.approx(v, abs=0.01)   # within 10 mV
        assert 1.0 < d.n < 4.0 and 0 <= d.rs_ohm < 50


def test_branch_current_inverts_the_diode_equation(bench):
    # The explicit (Lambert W) branch current must satisfy V = n Vt ln(1 + I/Is) + I (Rs + R).
    c = circuit_for(bench, "typ")
    d, r = c.diodes[0], c.branch_r[0]
    from composer.electrical.diode import branch_current
    v = np.linspace(0.5, 5.0, 50)
    i = branch_current(d, r, v)
    assert np.allclose(d.voltage(i) + i * r, v, rtol=1e-10, atol=1e-12)


# ------------------------------------------------------------------------------------------------
# Facts of the trade
# ------------------------------------------------------------------------------------------------
def test_eight_rows_give_twelve_and_a_half_percent_duty(bench):
    assert scan_timing(bench).duty == 0.125                    # common practice: 1 / 8 rows


@pytest.mark.parametrize("target_ma, row_ma", [(16.0, 256.0), (20.0, 320.0)])
def test_full_row_current_is_leds_times_colours_times_target(bench, target_ma, row_ma):
    # common practice: 8 LEDs x 2 colours x 16 mA = 256 mA per row; 320 mA at 20 mA.
    from composer.electrical.design import _exact_column
    designed = with_resistors(bench, _exact_column(bench, target_ma * 1e-3))
    s = solve_rows(8, 8, circuit_for(designed, "typ"))
    assert float(s.i_row) * 1e3 == pytest.approx(row_ma, rel=1e-6)
    assert np.allclose(s.i_led * 1e3, target_ma, rtol=1e-6)


def test_every_second_row_halves_the_average(bench):
    # common practice: lighting every second row halves the average supply current.
    full = np.full((1, 8, 8), 3, np.uint8)
    half = full.copy()
    half[0, 1::2] = 0
    a = analyse(full, [100], bench).supply_avg_ma[0]
    b = analyse(half, [100], bench).supply_avg_ma[0]
    assert b == pytest.approx(a / 2, rel=1e-9)


def _low_r(profile, ohms):
    return with_resistors(profile, {"red": ohms, "green": ohms})


def test_register_pin_limit_is_about_35_ma(bench):
    # common practice: a 74HC-family output's absolute maximum is about +-35 mA.
    assert bench.column_register.pin_abs_max_ma == 35.0
    frame = np.zeros((1, 8, 8), np.uint8)
    frame[0, 0, 0] = 1
    hot = analyse(frame, [100], _low_r(bench, 22.0), corner="stress")
    rules = {v.rule for v in hot.violations}
    assert hot.pin_ma_max[0] > 35.0 and "register-pin" in rules
    assert "U2 red pin Q7 (column 0, row 0)" in [v.where for v in hot.violations if v.rule == "register-pin"]


def test_led_continuous_rating_is_about_20_ma(bench):
    # common practice: a small indicator LED's continuous maximum is typically 20 mA; here the
    # average (peak x effective duty) is what the rating limits.
    assert bench.leds["red"].max_continuous_ma == 20.0
    t = scan_timing(bench)
    frame = np.zeros((1, 8, 8), np.uint8)
    frame[0, 0, 0] = 1
    rep = analyse(frame, [100], bench)
    assert rep.pin_ma_max[0] * t.effective_duty < 20.0
    assert not rep.stuck_scan[0]
    hot = analyse(frame, [100], _low_r(bench, 82.0), corner="stress")
    assert hot.pin_ma_max[0] > 20.0 and hot.stuck_scan[0] and hot.stuck_parts["led"][0]


def test_register_package_limit_is_about_70_ma(bench):
    # from memory (typical 74HC595-class datasheets): about 70 mA through one package's supply or
    # ground pin; eight outputs at about 11 mA exceed it.
    assert bench.column_register.package_abs_max_ma == 70.0
    frame = np.zeros((1, 8, 8), np.uint8)
    frame[0, 3, :] = 1
    rep = analyse(frame, [100], bench, corner="stress")
    assert rep.package_ma_max[0] == pytest.approx(8 * rep.pin_ma_max[0], rel=0.02)
    v = [v for v in rep.violations if v.rule == "register-package"]
    assert v and v[0].where.startswith("U2 red in row 3") and v[0].limit == 70.0


def test_usb_port_budget_is_500_ma(bench):
    # USB 2.0 specification, section 7.2.1: a standard downstream port supplies 5 unit loads of
    # 100 mA = 500 mA.
    assert bench.supply.budget_ma == 5 * 100.0
    frame = np.full((1, 8, 8), 3, np.uint8)
    rep = analyse(frame, [100], _low_r(bench, 10.0), corner="stress")
    over = {v.rule: v for v in rep.violations}
    assert "supply-peak" in over and over["supply-peak"].limit == 500.0


def _driver(**kw) -> RowDriver:
    # Typical 8-channel Darlington source driver (from memory): about 1.55 V at 100 mA and 1.8 V at
    # 350 mA, 500 mA absolute maximum, DIP package RthJA 60 C/W, Tj max 150 C, curves drawn at 50 C.
    base = dict(kind="source", channels=8, drop_model="log-linear", drop_a_v=0.96, drop_b_v=0.12,
                drop_c_ohm=0.4, drop_v0_v=None, drop_r_ohm=None, drop_table=None, channel_abs_max_ma=500.0,
                theta_ja_c_per_w=60.0, tj_max_c=150.0, ambient_c=50.0)
    base.update(kw)
    return RowDriver(**base)


def test_darlington_allowable_current_matches_common_practice():
    # common practice: about 120 mA per channel with all 8 on at 100 % duty, about 350 mA per
    # channel at 12.5 % duty; the thermal model with typical parameters must land within +-15 %.
    drv = _driver()
    assert allowable_peak_ma(drv, 1.0, 8) == pytest.approx(120.0, rel=0.15)
    assert allowable_peak_ma(drv, 0.125, 8) == pytest.approx(350.0, rel=0.15)
    assert allowable_peak_ma(drv, 0.01, 8) == 500.0               # the absolute maximum caps it


def test_driver_thermal_rule_fires_when_the_package_overheats(bench):
    hot = dataclasses.replace(bench, row_driver=dataclasses.replace(bench.row_driver, theta_ja_c_per_w=2000.0))
    rep = analyse(np.full((1, 8, 8), 3, np.uint8), [100], hot)
    v = [v for v in rep.violations if v.rule == "row-driver-thermal"]
    assert v and v[0].where == "row driver package 1 (rows 0-7)" and v[0].measured > 150.0


def test_drop_models_agree_where_they_describe_the_same_part(bench):
    # A table drawn from the log-linear model and a linear fit through two of its points give the
    # same row currents within the error of the piecewise/linear description.
    model = drop_model(bench.row_driver)
    pts = [[i, float(model.drop(i * 1e-3))] for i in (5.0, 20.0, 50.0, 100.0, 200.0, 400.0)]
    table = dataclasses.replace(bench.row_driver, drop_model="table", drop_a_v=None, drop_b_v=None,
                                drop_c_ohm=None, drop_table=tuple(map(tuple, pts)))
    a = solve_rows(8, 8, circuit_for(bench)).i_row
    b = solve_rows(8, 8, circuit_for(dataclasses.replace(bench, row_driver=table))).i_row
    assert float(b) == pytest.approx(float(a), rel=0.01)


# ------------------------------------------------------------------------------------------------
# Published standards
# ------------------------------------------------------------------------------------------------
def test_iec_60063_values():
    # IEC 60063: 75 and 150 are E24 values; 1.50 and 1.54 are E96 values; 1.55 is not.
    assert is_preferred(75.0, "E24") and is_preferred(150.0, "E24")
    assert is_preferred(1.50, "E96") and is_preferred(1.54, "E96") and not is_preferred(1.55, "E96")
    assert not is_preferred(75.0, "E12") and is_preferred(82.0, "E12")
    assert [len(SERIES[s]) for s in ("E12", "E24", "E96")] == [12, 24, 96]
    assert round_up(141.3, "E24") == 150.0 and round_up(150.0, "E24") == 150.0 and round_up(9.95, "E12") == 10.0


def test_iec_60063_e96_is_the_rounded_geometric_series_and_e24_keeps_its_eight_exceptions():
    # IEC 60063 builds E48-E192 as 10^(i/n) rounded to three figures; E24 and below keep historic
    # values that differ from the rounded series at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2.
    e96 = [round(10 ** (i / 96), 2) for i in range(96)]
    assert list(SERIES["E96"]) == e96
    e24 = [round(10 ** (i / 24), 1) for i in range(24)]
    differ = [v for v, g in zip(SERIES["E24"], e24) if v != g]
    assert differ == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]


def test_ieee_1789_flicker_regions():
    # IEEE Std 1789-2015 (from memory): low risk below 0.08*f % for 90-1250 Hz, unrestricted above
    # 1250 Hz; no observable effect below 0.0333*f % for 90-3000 Hz, unrestricted above 3000 Hz.
    assert flicker_region(1562.5)[0] == "low-risk"
    assert flicker_region(3500.0)[0] == "no-observable-effect"
    assert flicker_region(1000.0)[0] == "elevated-risk"
    assert flicker_region(1000.0, modulation_pct=50.0)[0] == "low-risk"       # 50 < 0.08 * 1000
    assert flicker_region(1000.0, modulation_pct=30.0)[0] == "no-observable-effect"   # 30 < 33.3
    assert flicker_region(60.0)[0] == "elevated-risk"
    # a low-risk text names the refresh the no-effect bound needs at that modulation: 50 / 0.0333 = 1502 Hz,
    # and 100 % needs the unrestricted 3000 Hz
    assert "more than 1502 Hz" in flicker_region(1000.0, modulation_pct=50.0)[1]
    assert "more than 3000 Hz" in flicker_region(1562.5)[1]


def _checker_swap(ms: int, frames: int = 2) -> tuple[np.ndarray, list[int]]:
    f = np.zeros((frames, 8, 8), np.uint8)
    f[0::2, ::2, :] = 1
    f[1::2, 1::2, :] = 2
    return f, [ms] * frames


def test_wcag_flash_rate(bench):
    # WCAG 2.x SC 2.3.1: more than three flashes (pairs of opposing changes) in any one second fails.
    f, ms = _checker_swap(100)                 # 10 changes per second = 5 flashes
    rep = analyse(f, ms, bench)
    assert not rep.flash.ok and rep.flash.general_per_s == 5.0
    assert {"flash-general", "flash-red"} <= {v.rule for v in rep.violations if v.frame is None}
    f, ms = _checker_swap(200)                 # 5 changes per second = 2.5 flashes
    assert analyse(f, ms, bench).flash.ok


def test_wcag_flash_area_threshold(bench):
    # WCAG 2.x: flashes below 0.006 sr, "25 % of any 10 degree visual field", are below threshold.
    f = np.zeros((2, 8, 8), np.uint8)
    f[1, :2, :] = 3                            # 16 of 64 LEDs: exactly 25 %, not more
    assert analyse(f, [50, 50], bench).flash.ok
    f[1, 2, 0] = 3                             # one more LED: over 25 %
    assert not analyse(f, [50, 50], bench).flash.ok
    small = dataclasses.replace(bench, safety=dataclasses.replace(bench.safety, flash_area_fraction=0.2))
    full, ms = _checker_swap(50)
    assert analyse(full, ms, small).flash.ok   # the whole panel is 20 % of the field


def test_wcag_red_flash_and_moving_content(bench):
    # WCAG 2.x red flash: transitions into or out of saturated red. Green <-> amber changes are
    # general flashes only.
    f = np.zeros((2, 8, 8), np.uint8)
    f[0] = 2
    f[1] = 3
    rep = analyse(f, [100, 100], bench)
    assert rep.flash.red_per_s == 0.0 and rep.flash.general_per_s == 5.0
    # A bar sweeping down the panel changes 25 % of it every frame but each LED only twice a cycle.
    sweep = np.zeros((8, 8, 8), np.uint8)
    for i in range(8):
        sweep[i, i] = 3
        sweep[i, (i + 1) % 8] = 3
    assert analyse(sweep, [100] * 8, bench).flash.ok


# ------------------------------------------------------------------------------------------------
# Bad input, the guard, the firmware backstop
# ------------------------------------------------------------------------------------------------
def _profile_text(name="bench-8x8") -> str:
    return (PROFILES / f"{name}.toml").read_text()


def test_supply_too_low_names_the_key():
    text = _profile_text().replace("voltage_v = 5.0", "voltage_v = 2.5")  # 1.7 V LED + 1 V driver
    prof = parse_profile(text, "low.toml")
    with pytest.raises(InputError) as err:
        analyse(np.zeros((1, 8, 8), np.uint8), [100], prof)
    assert "led.red.vf_typ_v" in str(err.value) and "\n" not in str(err.value)


def test_nan_and_nonsense_parameters_name_the_key():
    with pytest.raises(InputError) as err:
        parse_profile(_profile_text().replace("r_on_ohm = 25.0", "r_on_ohm = nan"), "nan.toml")
    assert "column_register.r_on_ohm" in str(err.value)
    bad = _profile_text().replace("iv_points = [[1.0, 1.72], [5.0, 1.83], [10.0, 1.90], [20.0, 2.00], [50.0, 2.22]]",
                                  "iv_points = [[1.0, 1.0], [2.0, 1.0001], [3.0, 1.0002]]")
    prof = parse_profile(bad, "flat.toml")
    with pytest.raises(InputError) as err:
        analyse(np.zeros((1, 8, 8), np.uint8), [100], prof)
    assert "led.red.iv_points" in str(err.value)


def test_wrong_frame_shape_is_input_error(bench):
    with pytest.raises(InputError):
        analyse(np.zeros((1, 8, 9), np.uint8), [100], bench)
    with pytest.raises(InputError):
        guard(np.zeros((4, 8), np.uint8), bench)
    with pytest.raises(InputError):
        analyse(np.zeros((1, 8, 8), np.uint8), [100], bench, corner="hot")


@pytest.mark.parametrize("name", ["bench-8x8", "wide-16x8", "shared-8x8", "cathode-8x8"])
def test_guard_is_analyse_at_the_stress_corner(name):
    prof = load_profile(name)
    rng = np.random.default_rng(7)
    for density in (0.0, 0.2, 0.5, 1.0):
        frame = (rng.random((prof.rows, prof.cols)) < density) * rng.integers(1, 4, (prof.rows, prof.cols))
        frame = frame.astype(np.uint8)
        verdict = guard(frame, prof)
        rep = analyse(frame[None], [100], prof, corner="stress")
        assert verdict.ok == bool(rep.frame_ok[0])
        assert [str(v) for v in verdict.violations] == [str(v) for v in rep.violations if v.frame is not None]
        assert all("\n" not in r for r in verdict.reasons)


@pytest.mark.parametrize("name", ["bench-8x8", "wide-16x8", "cathode-8x8", "shared-8x8"])
def test_firmware_lit_limit_is_the_most_a_guarded_row_can_hold(name):
    # Cross-check against the full analysis: some frame with k lit LEDs in one row passes the guard,
    # and no frame with k + 1 does. The kindest layout for the register packages spreads each colour
    # over its registers (the bundled profiles give each register a block of 8 columns).
    prof = load_profile(name)
    k = firmware_lit_limit(prof)
    spread = sorted(range(prof.cols), key=lambda c: (c % 8, c // 8))

    def some_split_passes(total: int) -> bool:
        for nr in range(max(0, total - prof.cols), min(total, prof.cols) + 1):
            frame = np.zeros((prof.rows, prof.cols), np.uint8)
            frame[0, spread[:nr]] |= 1
            frame[0, spread[:total - nr]] |= 2
            if guard(frame, prof).ok:
                return True
        return False

    assert k >= 1 and some_split_passes(k)
    if k < 2 * prof.cols:
        assert not some_split_passes(k + 1)


# ------------------------------------------------------------------------------------------------
# The vectorised counting against a direct count (both the packed-word and the general path)
# ------------------------------------------------------------------------------------------------
def _scattered_wide():
    # wide-16x8 with the red registers' outputs spread over alternate columns: not aligned blocks,
    # so the engine must take its general counting path.
    text = _profile_text("wide-16x8")
    text = text.replace("lines = [7, 6, 5, 4, 3, 2, 1, 0]", "lines = [0, 2, 4, 6, 8, 10, 12, 14]")
    text = text.replace("lines = [15, 14, 13, 12, 11, 10, 9, 8]", "lines = [1, 3, 5, 7, 9, 11, 13, 15]")
    return parse_profile(text, "scattered.toml")


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 2 ** 32 - 1), which=st.sampled_from(["wide-16x8", "bench-8x8", "scattered"]),
       density=st.floats(0.0, 1.0))
def test_counts_and_currents_match_a_direct_count(seed, which, density):
    prof = _scattered_wide() if which == "scattered" else load_profile(which)
    rng = np.random.default_rng(seed)
    shape = (4, prof.rows, prof.cols)
    frames = ((rng.random(shape) < density) * rng.integers(1, 4, shape)).astype(np.uint8)
    rep = analyse(frames, [100] * 4, prof, corner="stress")
    red, green = (frames & 1) != 0, (frames & 2) != 0
    s = solve_rows(red.sum(-1), green.sum(-1), circuit_for(prof, "stress"))
    assert np.allclose(rep.row_ma, s.i_row * 1e3, rtol=1e-12, atol=0)
    # package current: lit outputs of each register (from its lines) times that colour's current
    worst = np.zeros(4)
    for reg in prof.chain.registers:
        if reg.drives == "rows":
            continue
        k = 0 if reg.drives == "red" else 1
        cols = [c for c in reg.lines if c >= 0]
        lit = (red if k == 0 else green)[:, :, cols].sum(-1)
        worst = np.maximum(worst, (lit * s.i_led[..., k] * 1e3).max(axis=1))
    assert np.allclose(rep.package_ma_max, worst, rtol=1e-12)
    assert np.allclose(rep.pin_ma_max, (s.i_led * 1e3).max(axis=(1, 2)), rtol=1e-12)
