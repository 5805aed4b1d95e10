"""Hardware profile validation and ``rowcast profile show``."""
from __future__ import annotations

import json
import re
import subprocess
import sys

import pytest

from composer.errors import InputError
from composer.profile import bundled_profiles, load_profile, parse_profile

from conftest import PROFILES, ROOT

BENCH = (PROFILES / "bench-8x8.toml").read_text()


def test_bundled_profiles_are_valid_and_cover_the_variants():
    names = bundled_profiles()
    assert {"bench-8x8", "wide-16x8", "cathode-8x8"} <= set(names)
    bench, wide, cathode = (load_profile(n) for n in ("bench-8x8", "wide-16x8", "cathode-8x8"))
    assert (bench.rows, bench.cols, bench.n_registers, bench.panel.common) == (8, 8, 3, "anode")
    assert (wide.rows, wide.cols, wide.n_registers) == (8, 16, 5)
    assert cathode.panel.common == "cathode" and cathode.row_driver.kind == "sink"
    for name in names:
        text = (PROFILES / f"{name}.toml").read_text()
        # every typical value recalled without a datasheet says so
        assert "from memory" in text, name


def test_refresh_given_instead_of_row_period():
    text = BENCH.replace("row_period_us = 90.0", "refresh_hz = 1000.0")
    prof = parse_profile(text)
    assert prof.scan.row_period_us == pytest.approx(125.0)  # 1 / (1000 Hz x 8 rows)


def _sub(old, new):
    def f(text):
        assert old in text, old
        return text.replace(old, new, 1)
    return f


BAD = [
    ("unknown key", _sub("voltage_v = 5.0", "voltage = 5.0"), ["supply.voltage", 'did you mean "voltage_v"']),
    ("unknown table", _sub("[supply]", "[suply]"), ["suply", 'did you mean "supply"']),
    ("missing key", _sub("budget_ma = 500.0", ""), ["supply.budget_ma", "missing"]),
    ("missing table", lambda t: re.sub(r"\[column_register\][^\[]*", "", t), ["column_register", "missing"]),
    ("wrong type", _sub("rows = 8", 'rows = "eight"'), ["panel.rows", "whole number"]),
    ("bool as number", _sub("voltage_v = 5.0", "voltage_v = true"), ["supply.voltage_v", "number"]),
    ("zero resistance", _sub("ohms = 150.0", "ohms = 0.0"), ["resistor.red.ohms", "above 0"]),
    ("negative resistance", _sub("ohms = 150.0", "ohms = -10.0"), ["resistor.red.ohms"]),
    ("NaN", _sub("ohms = 150.0", "ohms = nan"), ["resistor.red.ohms", "finite"]),
    ("forward voltage at supply", _sub("voltage_v = 5.0", "voltage_v = 1.8"), ["led.red.vf_min_v", "supply"]),
    ("forward voltages out of order", _sub("vf_typ_v = 2.0", "vf_typ_v = 2.9"), ["led.red.vf_typ_v"]),
    ("bit map duplicate", _sub("lines = [7, 6, 5, 4, 3, 2, 1, 0]", "lines = [7, 6, 5, 4, 3, 2, 1, 1]"),
     ["chain.register[1].lines", "not a permutation"]),
    ("bit map missing line", _sub("lines = [7, 6, 5, 4, 3, 2, 1, 0]", "lines = [7, 6, 5, 4, 3, 2, 1, -1]"),
     ["lines", "[0]", "not a permutation"]),
    ("bit map out of range", _sub("lines = [7, 6, 5, 4, 3, 2, 1, 0]", "lines = [8, 6, 5, 4, 3, 2, 1, 0]"),
     ["chain.register[1].lines", "outside"]),
    ("bit map wrong length", _sub("lines = [7, 6, 5, 4, 3, 2, 1, 0]", "lines = [7, 6, 5]"),
     ["chain.register[1].lines", "8"]),
    ("bad choice", _sub('bit_order = "msb-first"', 'bit_order = "msb_first"'),
     ["chain.bit_order", 'did you mean "msb-first"']),
    ("driver kind", _sub('kind = "source"', 'kind = "sink"'), ["row_driver.kind", "common-anode"]),
    ("drop model params", lambda t: re.sub(r"(?m)^drop_c_ohm = .*$", "", t), ["row_driver.drop_c_ohm", "log-linear"]),
    ("junction limit at ambient", lambda t: _sub("ambient_c = 25.0", "ambient_c = 100.0")(
        _sub("tj_max_c = 150.0", "tj_max_c = 90.0")(t)), ["row_driver.tj_max_c", "ambient"]),
    ("blanking fills slot", _sub("blanking_us = 4.0", "blanking_us = 90.0"), ["scan.blanking_us"]),
    ("both timings", _sub("row_period_us = 90.0", "row_period_us = 90.0\nrefresh_hz = 100.0"),
     ["scan.row_period_us", "exactly one"]),
    ("no register for green", lambda t: t[:t.index('[[chain.register]]\nname = "U3 green"')] + t[t.index("[supply]"):],
     ['no register drives "green"']),
    ("wrong format", _sub("rowcast-profile/1", "rowcast-profile/2"), ["format"]),
    ("truncated", lambda t: t[: t.index("[scan]") + 9], ["not valid TOML"]),
    ("iv points falling", _sub("[10.0, 1.90]", "[10.0, 1.50]"), ["led.red.iv_points", "fall"]),
]


@pytest.mark.parametrize("case,transform,words", BAD, ids=[b[0] for b in BAD])
def test_bad_profiles_give_one_line(tmp_path, case, transform, words):
    path = tmp_path / "bad.toml"
    path.write_text(transform(BENCH))
    with pytest.raises(InputError) as info:
        load_profile(path)
    message = str(info.value)
    assert "\n" not in message and str(path) in message
    for word in words:
        assert word in message, (case, message)


def test_error_names_the_line_of_the_key(tmp_path):
    path = tmp_path / "bad.toml"
    text = BENCH.replace("budget_ma = 500.0", "budget_ma = -1.0")
    path.write_text(text)
    line = text.split("\n").index(next(l for l in text.split("\n") if l.startswith("budget_ma"))) + 1
    with pytest.raises(InputError, match=f"bad.toml:{line}: supply.budget_ma"):
        load_profile(path)


def test_crlf_bom_accepted_and_garbage_refused(tmp_path):
    crlf = tmp_path / "crlf.toml"
    crlf.write_bytes(b"\xef\xbb\xbf" + BENCH.replace("\n", "\r\n").encode())
    assert load_profile(crlf).name == "bench-8x8"
    junk = tmp_path / "junk.toml"
    junk.write_bytes(bytes(range(256)))
    with pytest.raises(InputError, match="junk.toml: binary"):
        load_profile(junk)


def test_unknown_bundled_name_suggests():
    with pytest.raises(InputError, match='did you mean "bench-8x8"'):
        load_profile("bench-8x9")


def _rowcast(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "composer", *args], capture_output=True, text=True, cwd=cwd,
                          timeout=120)


def test_cli_bad_profile_exit_2_one_line(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(BENCH.replace("ohms = 150.0", "ohms = 0.0"))
    proc = _rowcast("profile", "show", str(path))
    assert proc.returncode == 2 and proc.stdout == ""
    assert len(proc.stderr.strip().split("\n")) == 1 and "resistor.red.ohms" in proc.stderr


def test_cli_usage_error_exit_2_one_line():
    proc = _rowcast("profile", "shw", "bench-8x8")
    assert proc.returncode == 2 and len(proc.stderr.strip().split("\n")) == 1


def _flat_keys(data, prefix=""):
    for key, value in data.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            yield from _flat_keys(value, name + ".")
        elif isinstance(value, list) and value and isinstance(value[0], dict):
            yield from _flat_keys(value[0], name + "[].")
        else:
            yield name


def test_profile_show_json_keys_are_documented_in_readme():
    proc = _rowcast("profile", "show", "bench-8x8", "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    assert data["panel"]["rows"] == 8 and data["supply"]["voltage_v"] == 5.0
    assert data["scan"]["refresh_hz"] == pytest.approx(1e6 / (90 * 8))
    readme = (ROOT / "README.md").read_text()
    section = readme[readme.index("### Hardware profiles"):]
    missing = [k for k in _flat_keys(data) if f"`{k.split('.')[-1].replace('[]', '')}`" not in section]
    assert not missing, f"profile show --json keys not documented in README: {missing}"


def test_profile_show_text_has_units():
    proc = _rowcast("profile", "show", "bench-8x8")
    assert proc.returncode == 0
    assert re.search(r"supply\.voltage_v\s+5\.0 V", proc.stdout)
    assert re.search(r"resistor\.red\.ohms\s+150\.0 ohm", proc.stdout)
    assert re.search(r"row_driver\.theta_ja_c_per_w\s+60\.0 C/W", proc.stdout)


def test_readme_profile_table_is_the_schema():
    from composer.profile import schema_markdown
    readme = (ROOT / "README.md").read_text()
    block = readme.split("<!-- profile-keys:begin -->\n")[1].split("\n<!-- profile-keys:end -->")[0]
    assert block == schema_markdown(), "README profile table is stale: paste `python -m composer.profile`"


def test_ci_runs_the_readme_test_command_verbatim():
    readme = (ROOT / "README.md").read_text()
    ci = (ROOT / ".ci" / "run").read_text().strip().split("\n")[-1].strip()
    assert ci == "bash tests/install-and-run.sh" and f"    {ci}\n" in readme
