"""Utilisation (each rule's measured value against its limit), per-LED currents and every place over
a limit, against a hand calculation written here from the datasheet values in the profile.

The independent model: each LED's forward voltage is read off its datasheet I-V points (log-linear
interpolation between the points the profile lists), the driver's drop is the profile's formula
``a + b ln(I / 1 mA) + c I``, and the row is solved by bisection on Kirchhoff's laws (KVL round
each branch, KCL at the row node). The engine fits a Shockley curve instead, which passes within
10 mV of the same points, so the two agree within 2 %.
"""
from __future__ import annotations

import dataclasses
import math
import re
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from composer.electrical import analyse, led_currents, places_over, register_totals
from composer.pattern_file import open_pattern
from composer.profile import bundled_profiles, load_profile, parse_profile

ROOT = Path(__file__).resolve().parent.parent
OVERLOAD = ROOT / "patterns" / "overload-sweep.rowcast.toml"
PROFILES = {name: load_profile(name) for name in bundled_profiles()}
ROW_RULES = ("row-driver-peak", "led-peak", "led-average", "register-pin", "register-package", "supply-peak")


# ------------------------------------------------------------------------------------------------
# The hand model (bench-8x8, typical corner: 5.0 V, 150 ohm, the datasheet curves as given)
# ------------------------------------------------------------------------------------------------
def _v_led(points, i_ma: float) -> float:
    """Forward voltage at ``i_ma`` read off the datasheet points, log-linear between them."""
    i = np.array([p[0] for p in points])
    v = np.array([p[1] for p in points])
    x = math.log(i_ma)
    lx = np.log(i)
    k = int(np.clip(np.searchsorted(lx, x) - 1, 0, len(lx) - 2))
    return float(v[k] + (v[k + 1] - v[k]) * (x - lx[k]) / (lx[k + 1] - lx[k]))


def _drop(prof, i_ma: float) -> float:
    rd = prof.row_driver
    return rd.drop_a_v + rd.drop_b_v * math.log(max(i_ma, 1e-9)) + rd.drop_c_ohm * i_ma * 1e-3


def _branch_ma(prof, colour: str, v_node: float) -> float:
    """KVL round one branch: v_node = V_led(I) + I (R + r_on), by bisection on I."""
    r = prof.resistor.parts[colour].ohms + prof.column_register.r_on_ohm
    lo, hi = 1e-6, 1000.0
    for _ in range(100):
        mid = (lo * hi) ** 0.5
        if _v_led(prof.leds[colour].iv_points, mid) + mid * 1e-3 * r > v_node:
            hi = mid
        else:
            lo = mid
    return lo


def hand_row(prof, n_red: int, n_green: int) -> tuple[float, float, float]:
    """(I red LED, I green LED, I row) in mA: KCL at the row node, bisection on its voltage."""
    lo, hi = 0.0, prof.supply.voltage_v
    for _ in range(100):
        v = (lo + hi) / 2
        i_r, i_g = _branch_ma(prof, "red", v), _branch_ma(prof, "green", v)
        i_row = n_red * i_r + n_green * i_g
        if v + _drop(prof, i_row) > prof.supply.voltage_v:
            hi = v
        else:
            lo = v
    return i_r * (n_red > 0), i_g * (n_green > 0), i_row


@pytest.fixture(scope="module")
def bench():
    return load_profile("bench-8x8")


def _duty(prof) -> float:
    # common practice: each of N rows is on 1/N of the time, less the blanking in each row slot
    sc = prof.scan
    return (sc.row_period_us - sc.blanking_us) / sc.row_period_us / prof.rows


def _util(prof, frame: np.ndarray, rule: str) -> float:
    rep = analyse(frame[None], [100], prof, corner="typ")
    assert rep.binding(0) == max(rep.rule_utilisation, key=lambda r: rep.rule_utilisation[r][0])
    return float(rep.rule_utilisation[rule][0])


def _frame(prof, **rows) -> np.ndarray:
    return np.zeros((prof.rows, prof.cols), np.uint8)


def test_one_led_pin_peak_and_average_by_hand(bench):
    frame = _frame(bench)
    frame[0, 0] = 1
    i_r, _, _ = hand_row(bench, 1, 0)
    d = _duty(bench)
    # 74HC-family output 35 mA absolute maximum (common practice), from the profile
    assert _util(bench, frame, "register-pin") == pytest.approx(i_r / 35.0, rel=0.02)
    # pulsed rating 100 mA at 1/10 duty, 0.1 ms (from memory); above 1/10 duty the peak is scaled to
    # keep the rated average (common practice): 100 mA x 0.1 / d
    peak_limit = max(20.0, 100.0 * 0.1 / d) if d > 0.1 else 100.0
    assert _util(bench, frame, "led-peak") == pytest.approx(i_r / peak_limit, rel=0.02)
    # continuous rating 20 mA (common practice) against the average, peak x duty
    assert _util(bench, frame, "led-average") == pytest.approx(i_r * d / 20.0, rel=0.02)


def test_six_leds_on_one_register_package_by_hand(bench):
    frame = _frame(bench)
    frame[2, :6] = 1                      # U2 red drives columns 0-7: six outputs on
    i_r, _, _ = hand_row(bench, 6, 0)
    # 70 mA through one package's supply or ground pin (from memory, the profile's value)
    assert _util(bench, frame, "register-package") == pytest.approx(6 * i_r / 70.0, rel=0.02)


def test_full_row_driver_peak_and_supply_peak_by_hand(bench):
    frame = _frame(bench)
    frame[4, :] = 3
    _, _, i_row = hand_row(bench, 8, 8)
    # USB 2.0 section 7.2.1: 500 mA from a standard downstream port
    assert _util(bench, frame, "supply-peak") == pytest.approx(i_row / 500.0, rel=0.02)
    # A package that sheds its heat easily (1 C/W): the channel's 500 mA absolute maximum binds,
    # min(abs max, I_dc / sqrt(duty)) = 500 mA
    cool = dataclasses.replace(bench, row_driver=dataclasses.replace(bench.row_driver, theta_ja_c_per_w=1.0))
    assert _util(cool, frame, "row-driver-peak") == pytest.approx(i_row / 500.0, rel=0.02)


def test_everything_lit_heating_and_supply_average_by_hand(bench):
    frame = np.full((bench.rows, bench.cols), 3, np.uint8)
    _, _, i_row = hand_row(bench, 8, 8)
    d = _duty(bench)
    # junction rise = RthJA x power; power = sum over the package's rows of V_drop x I x duty
    rise = 60.0 * bench.rows * _drop(bench, i_row) * i_row * 1e-3 * d
    assert _util(bench, frame, "row-driver-thermal") == pytest.approx(rise / (150.0 - 25.0), rel=0.02)
    assert _util(bench, frame, "supply-average") == pytest.approx(bench.rows * i_row * d / 500.0, rel=0.02)


def test_column_resistor_power_by_hand(bench):
    frame = np.full((bench.rows, bench.cols), 1, np.uint8)
    i_r, _, _ = hand_row(bench, 8, 0)
    # P = I^2 R for each row slot the column conducts, times the duty; 1/8 W parts
    watts = bench.rows * (i_r * 1e-3) ** 2 * 150.0 * _duty(bench)
    assert _util(bench, frame, "resistor-power") == pytest.approx(watts / 0.125, rel=0.02)


# ------------------------------------------------------------------------------------------------
# Consistency: the verdict, the utilisation and the binding rule never disagree
# ------------------------------------------------------------------------------------------------
@st.composite
def _case(draw):
    name = draw(st.sampled_from(sorted(PROFILES)))
    text = Path(PROFILES[name].source).read_text(encoding="utf-8")
    ohms = draw(st.floats(15.0, 680.0))
    text = re.sub(r"(?m)^ohms = [0-9.]+", f"ohms = {ohms:.1f}", text)
    prof = parse_profile(text, f"<{name} with {ohms:.1f} ohm>")
    density = draw(st.floats(0.0, 1.0))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    frames = np.where(rng.random((6, prof.rows, prof.cols)) < density,
                      rng.integers(1, 4, (6, prof.rows, prof.cols)), 0).astype(np.uint8)
    return prof, frames


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_case(), st.sampled_from(["typ", "stress", "bright"]))
def test_ok_frames_stay_under_one_and_over_frames_reach_it(case, corner):
    prof, frames = case
    rep = analyse(frames, [100] * len(frames), prof, corner=corner)
    util = np.stack([rep.rule_utilisation[r] for r in rep.rules])
    for f in range(len(frames)):
        rules_over = {v.rule for v in rep.frame_violations(f)}
        if rep.frame_ok[f]:
            assert util[:, f].max() <= 1.0
        else:
            assert util[:, f].max() >= 1.0 and rep.utilisation[f] >= 1.0
            assert all(rep.rule_utilisation[r][f] >= 1.0 for r in rules_over)
        assert rep.binding(f) in rep.rules and rep.utilisation[f] == util[:, f].max()
        # the row bars: any row-level rule over shows as a row at or over 100 %
        if rules_over & set(ROW_RULES):
            assert rep.row_utilisation[f].max() >= 1.0
        assert rep.row_utilisation[f].max() <= rep.utilisation[f] * (1 + 1e-12)


# ------------------------------------------------------------------------------------------------
# Per-LED currents and every place over a limit
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", sorted(PROFILES))
def test_per_led_currents_add_up_to_the_row_and_the_packages(name):
    prof = PROFILES[name]
    rng = np.random.default_rng(7)
    frames = np.where(rng.random((5, prof.rows, prof.cols)) < 0.4,
                      rng.integers(1, 4, (5, prof.rows, prof.cols)), 0).astype(np.uint8)
    for corner in ("typ", "stress"):
        led = led_currents(frames, prof, corner=corner)
        assert led.shape == frames.shape + (2,) and led.dtype == np.float32
        for k in range(2):                                   # 0 exactly where that die is off
            lit = (frames & (1 << k)) != 0
            assert not led[..., k][~lit].any() and (led[..., k][lit] > 0).all()
        rep = analyse(frames, [100] * 5, prof, corner=corner)
        # Kirchhoff's current law at the row node: the row current is the sum of its LEDs
        assert np.allclose(led.sum(axis=(2, 3)), rep.row_ma, rtol=1e-6)
        for f in range(len(frames)):
            totals = register_totals(frames[f], prof, corner=corner)
            assert totals.max() == pytest.approx(rep.package_ma_max[f], rel=1e-6)


def test_per_led_current_matches_a_hand_solved_row(bench):
    frame = _frame(bench)
    frame[3, [0, 2, 5]] = 1
    frame[3, [1, 2]] |= 2
    i_r, i_g, _ = hand_row(bench, 3, 2)
    led = led_currents(frame[None], bench, corner="typ")[0]
    assert led[3, 0, 0] == pytest.approx(i_r, rel=0.02) and led[3, 1, 1] == pytest.approx(i_g, rel=0.02)
    assert led[3, 2, 0] == led[3, 5, 0] and led[3, 1, 0] == 0.0


def test_every_place_lists_both_packages_of_overload_sweep_frame_0():
    anim, prof = open_pattern(OVERLOAD)
    places = [v for v in places_over(anim.frames, anim.durations_ms, prof) if v.frame == 0]
    pkgs = [v.where for v in places if v.rule == "register-package"]
    assert any(w.startswith("U2 red in row 0") for w in pkgs) and any(w.startswith("U3 green in row 0") for w in pkgs)
    # the worst-place report names only one of them; every place of it is in the full list
    rep = analyse(anim.frames, anim.durations_ms, prof, corner="stress")
    worst = {(v.frame, v.rule, v.where) for v in rep.violations}
    assert worst <= {(v.frame, v.rule, v.where) for v in places_over(anim.frames, anim.durations_ms, prof)}
    for v in places:
        assert v.measured > v.limit
