"""SPICE netlist of one row of one frame, for checking the engine in a general-purpose simulator.

The netlist is the same circuit ``solve.py`` solves, element for element: LEDs are ``D`` models with
the fitted IS, N, RS (``diode.py`` uses ngspice's constants, so the curves are identical); the
log-linear driver drop is a ``D`` model (IS = I0, N = b / Vt) plus a resistor c; a linear drop is a
DC source v0 plus a resistor; a table drop is a B source with ``pwl()`` of the row current. Each
branch has a 0 V source as an ammeter (``i(vl<k>)``), and so does the row (``i(vrow)``). Zero
ohms is written as a 0 V source, never as a 0 ohm resistor (SPICE would change it to 1 milliohm).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..model import size_text
from ..profile import COLOURS, Profile
from .diode import VT
from .drivers import DropModel
from .solve import Circuit, circuit_for

__all__ = ["RowNetlist", "row_netlist", "SPICE_OPTIONS"]

# tighter than the defaults (reltol 1e-3 gives about 1e-5 relative error in the currents)
SPICE_OPTIONS = ".options reltol=1e-9 vntol=1e-12 abstol=1e-15"


@dataclass(frozen=True)
class RowNetlist:
    text: str
    branches: tuple[tuple[str, str, int], ...]   # (ammeter vector name, colour, column)
    row_vector: str                               # ammeter of the whole row
    data_file: str                                # what the .control block writes with wrdata


def _series(name: str, a: str, b: str, ohms: float) -> str:
    return f"V{name} {a} {b} DC 0" if ohms == 0 else f"{name} {a} {b} {ohms!r}"


def _driver(drv: DropModel, a: str, b: str, ammeter: str) -> list[str]:
    """The driver channel from node a to node b (current flows a -> b)."""
    if drv.kind == "table":
        pts = ", ".join(f"{i!r}, {v!r}" for i, v in zip(drv.table_i, drv.table_v))
        slope = (drv.table_v[-1] - drv.table_v[-2]) / (drv.table_i[-1] - drv.table_i[-2])
        far_i = drv.table_i[-1] + 100.0
        far = f"{far_i!r}, {drv.table_v[-1] + 100.0 * slope!r}"   # the last segment, extended
        lines = [f"BDRV {a} xd V=pwl(i({ammeter}), {pts}, {far})"]
        lines.append(_series("RDRV", "xd", b, drv.r_ohm))
        return lines
    lines = []
    if drv.b_v > 0:
        lines.append(f"DDRV {a} xd DRV")
    else:
        lines.append(f"VDRV {a} xd DC {drv.fixed_v!r}")
    lines.append(_series("RDRV", "xd", b, drv.r_ohm))
    return lines


def row_netlist(profile: Profile, frame: np.ndarray, row: int, *, corner: str = "typ",
                title: str = "", data_file: str = "row.out") -> RowNetlist:
    frame = np.asarray(frame)
    if frame.shape != (profile.rows, profile.cols):
        raise InputError(f"frame is {'x'.join(map(str, frame.shape))}, profile {profile.name} is "
                         f"{size_text(profile.rows, profile.cols)}")
    if not 0 <= row < profile.rows:
        raise InputError(f"row {row} is outside 0..{profile.rows - 1}")
    c: Circuit = circuit_for(profile, corner)
    anode = profile.panel.common == "anode"
    out = [f"* {title or 'rowcast row netlist'}",
           f"* profile {profile.name}, corner {corner}, row {row}, common {profile.panel.common}, "
           f"resistor placement {profile.resistor.placement}",
           f"VSUP sup 0 DC {c.supply_v!r}"]
    branches = []
    lit = [(col, k) for col in range(profile.cols) for k in range(2) if int(frame[row, col]) & (1 << k)]
    if anode:
        # supply -> row ammeter -> driver -> [row resistor] -> node rn -> LED branches -> ground
        out.append("VROW sup d1 DC 0")
        out += _driver(c.driver, "d1", "rd", "vrow")
        out.append(_series("RROW", "rd", "rn", c.row_r))
        for k, (col, colour) in enumerate(lit):
            out += [f"VL{k} rn a{k} DC 0", f"DL{k} a{k} c{k} LED{COLOURS[colour].upper()}",
                    _series(f"RC{k}", f"c{k}", f"p{k}", c.column_r[colour]),
                    _series(f"RON{k}", f"p{k}", "0", profile.column_register.r_on_ohm)]
            branches.append((f"i(vl{k})", COLOURS[colour], col))
    else:
        # supply -> register output -> column resistor -> LED -> node rn -> [row resistor] -> driver -> ground
        for k, (col, colour) in enumerate(lit):
            out += [f"VL{k} sup p{k} DC 0", _series(f"RON{k}", f"p{k}", f"q{k}", profile.column_register.r_on_ohm),
                    _series(f"RC{k}", f"q{k}", f"a{k}", c.column_r[colour]),
                    f"DL{k} a{k} rn LED{COLOURS[colour].upper()}"]
            branches.append((f"i(vl{k})", COLOURS[colour], col))
        out.append(_series("RROW", "rn", "rd", c.row_r))
        out.append("VROW rd d1 DC 0")
        out += _driver(c.driver, "d1", "0", "vrow")
    for k, colour in enumerate(COLOURS):
        d = c.diodes[k]
        out.append(f".model LED{colour.upper()} D(IS={d.is_a!r} N={d.n!r} RS={d.rs_ohm!r})")
    if c.driver.kind != "table" and c.driver.b_v > 0:
        out.append(f".model DRV D(IS={c.driver.i0_a!r} N={c.driver.b_v / VT!r})")
    vectors = " ".join(["i(vrow)"] + [b[0] for b in branches])
    out += [SPICE_OPTIONS, ".control", "set numdgt=15", "set wr_vecnames", "set wr_singlescale", "op",
            f"wrdata {data_file} {vectors}", "quit 0", ".endc", ".end"]
    return RowNetlist("\n".join(out) + "\n", tuple(branches), "i(vrow)", data_file)
