"""Writes composer/data/cie1931_2deg_cmf.csv, the CIE 1931 2-degree standard colorimetric observer.

The numbers are the 1 nm tabulation of the CIE 1931 standard colorimetric observer (CIE 018:2019,
ISO/CIE 11664-1:2019), taken from the colour-science package (its dataset
"CIE 1931 2 Degree Standard Observer", which it cites from the CVRL "Older CIE Standards" database).
colour-science is a test dependency only: run this after installing the [test] extra,
``.venv/bin/python tests/make_cie_table.py``. tests/test_light.py checks the shipped file against it.
"""
from __future__ import annotations

import warnings
from pathlib import Path

OUT = Path(__file__).resolve().parent.parent / "composer" / "data" / "cie1931_2deg_cmf.csv"

HEADER = """\
# CIE 1931 2-degree standard colorimetric observer: colour-matching functions xbar, ybar, zbar, 360-830 nm in 1 nm steps.
# Standard: CIE 018:2019 / ISO/CIE 11664-1:2019 (CIE colorimetry - Part 1: CIE standard colorimetric observers).
# Numbers taken from the colour-science Python package {version} (dataset "CIE 1931 2 Degree Standard Observer",
# which cites the CVRL "Older CIE Standards" database) by tests/make_cie_table.py.
nm,xbar,ybar,zbar
"""


def main() -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        import colour
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    lines = [HEADER.format(version=colour.__version__)]
    for nm, (x, y, z) in zip(cmfs.wavelengths, cmfs.values):
        lines.append(f"{int(nm)},{x:.6e},{y:.6e},{z:.6e}\n")
    OUT.write_text("".join(lines), encoding="ascii")
    print(f"wrote {OUT} ({len(lines) - 1} wavelengths)")


if __name__ == "__main__":
    main()
