"""How fast the receiver firmware can scan a panel: the shortest row period it sustains and the refresh
that gives, beside the flicker regions, so a builder can pick a row period.

The receiver's row interrupt (``firmware_stub/board/avr328p/row_tick.c``, the steps of
``firmware_stub/core/scan.h`` written instruction by instruction) costs a fixed part plus a part per byte of
the row slot it shifts. Both numbers are measured in simavr (``tests/bench/bench_firmware.py`` prints them;
``tests/test_tiled.py`` fails when the firmware no longer matches them), so this module states what the
firmware in this tree does, not a guess.

"Sustains" means the scan takes at most :data:`SCAN_CPU_SHARE` of the core: the rest of the time the main
loop decodes the serial stream (a FRAME of the 32 x 16 sign arrives every few milliseconds at 1 Mbaud).
"""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

from ..profile import Profile
from .timing import flicker_region

__all__ = ["ScanSpeed", "scan_speed", "row_irq_cycles", "F_CPU_HZ", "ROW_IRQ_BASE_CYCLES",
           "ROW_IRQ_CYCLES_PER_BYTE", "BLANK_END_CYCLES", "LIGHT_AT_ONCE_CYCLES", "SCAN_CPU_SHARE",
           "MIN_ROW_PERIOD_US", "LOW_RISK_HZ", "NO_EFFECT_HZ"]

F_CPU_HZ = 16_000_000          # firmware_stub/Makefile F_CPU: an ATmega328P-class board at 16 MHz
# Mean cycles of one row interrupt for B bytes a slot: BASE + PER_BYTE * B (interrupt response and RETI
# included; the once-a-scan frame swap spread over the scan). Measured in simavr with a short blanking:
# 84.5 for 3 bytes, 118.5 for 5, 202.3 for 10 (tests/bench/bench_firmware.py; 162, 198 and 287 before the
# hand-written interrupt): the shift writes a byte every 17 cycles against the SPI's 16
# (firmware_stub/board/avr328p/row_tick.c); the fixed part is the blanking, latch, end-of-blanking timer,
# watchdog, self-masking and slot bookkeeping that do not fit in the gaps, and the return.
ROW_IRQ_BASE_CYCLES = 33
ROW_IRQ_CYCLES_PER_BYTE = 17
# A blanking longer than LIGHT_AT_ONCE_CYCLES (firmware_stub/board/avr328p/board_impl.h) ends in a
# second, three-instruction interrupt: 4 cycles of response, JMP 3, SBIC 1, CBI 2, RETI 4 (ATmega328P
# data sheet, "Interrupt Response Time" and instruction set summary, from memory). A shorter one ends
# inside the row interrupt at no extra cost.
BLANK_END_CYCLES = 14
LIGHT_AT_ONCE_CYCLES = 40
SCAN_CPU_SHARE = 0.30          # the scan's share of the core this project holds the firmware to
MIN_ROW_PERIOD_US = 20         # firmware_stub/core/config.h RC_MIN_ROW_PERIOD_US: CONFIGURE refuses less
# IEEE Std 1789-2015 for 100 % modulation (see timing.flicker_region; from memory): low risk above
# 1250 Hz, no observable effect above 3000 Hz.
LOW_RISK_HZ = 1250.0
NO_EFFECT_HZ = 3000.0


def row_irq_cycles(bytes_per_row: int, blanking_us: float = 0.0) -> float:
    """Cycles the scan takes each row: the row interrupt and, for a long blanking, the end-of-blanking one."""
    # The firmware rounds the blanking up to whole cycles (board_tick_start).
    long_blank = math.ceil(round(blanking_us * F_CPU_HZ / 1e6, 6)) > LIGHT_AT_ONCE_CYCLES
    return ROW_IRQ_BASE_CYCLES + ROW_IRQ_CYCLES_PER_BYTE * bytes_per_row + (BLANK_END_CYCLES if long_blank else 0)


@dataclass(frozen=True)
class ScanSpeed:
    rows: int
    bytes_per_row: int
    irq_cycles: float              # the scan's cycles a row (row interrupt, end-of-blanking interrupt)
    cpu_share_max: float
    fastest_row_period_us: float   # the shortest the receiver sustains
    fastest_refresh_hz: float
    fastest_region: str            # timing.FLICKER_REGIONS
    row_period_us: float           # the profile's
    refresh_hz: float              # the profile's
    region: str
    cpu_share: float               # the profile's scan share of the core
    sustained: bool                # the profile's row period is at least the fastest
    low_risk_below_us: float       # row periods shorter than this refresh above 1250 Hz
    no_effect_below_us: float      # ... above 3000 Hz

    def to_json(self) -> dict:
        return {k: (round(v, 4) if isinstance(v, float) else v) for k, v in asdict(self).items()}

    def lines(self) -> list[str]:
        """Three report lines: what the receiver sustains, where the profile stands, what to aim for."""
        return [
            f"fastest scan: about {self.irq_cycles:.0f} cycles a row for {self.bytes_per_row} bytes a slot "
            f"({ROW_IRQ_BASE_CYCLES} + {ROW_IRQ_CYCLES_PER_BYTE} a byte"
            + (f" + {BLANK_END_CYCLES} to end the blanking" if self.irq_cycles
               > ROW_IRQ_BASE_CYCLES + ROW_IRQ_CYCLES_PER_BYTE * self.bytes_per_row else "")
            + f" at {F_CPU_HZ / 1e6:g} MHz, simavr); within "
            f"{100 * self.cpu_share_max:.0f} % of the core: rows of {self.fastest_row_period_us:.1f} us or longer, "
            f"{self.fastest_refresh_hz:.0f} Hz refresh ({self.fastest_region})",
            f"this scan: {self.row_period_us:g} us rows, {self.refresh_hz:.0f} Hz ({self.region}), scan "
            f"{100 * self.cpu_share:.0f} % of the core: "
            + ("the receiver sustains it" if self.sustained else
               f"FASTER than the receiver sustains (use {self.fastest_row_period_us:.1f} us or more)"),
            f"choosing: rows under {self.low_risk_below_us:.1f} us for low flicker risk (above {LOW_RISK_HZ:g} Hz), "
            f"under {self.no_effect_below_us:.1f} us for no observable effect (above {NO_EFFECT_HZ:g} Hz)",
        ]


def scan_speed(profile: Profile) -> ScanSpeed:
    rows, nbytes = profile.rows, profile.n_registers
    cycles = row_irq_cycles(nbytes, profile.scan.blanking_us)
    # Rounded up to 0.1 us, the resolution the report prints, so "sustained" never rounds the wrong way.
    fastest = max(float(MIN_ROW_PERIOD_US), profile.scan.blanking_us + 0.1,
                  math.ceil(cycles / (SCAN_CPU_SHARE * F_CPU_HZ) * 1e7) / 10)
    fastest_hz = 1e6 / (fastest * rows)
    period = profile.scan.row_period_us
    hz = 1e6 / (period * rows)
    share = cycles / (period * 1e-6 * F_CPU_HZ)
    return ScanSpeed(rows=rows, bytes_per_row=nbytes, irq_cycles=cycles, cpu_share_max=SCAN_CPU_SHARE,
                     fastest_row_period_us=fastest, fastest_refresh_hz=fastest_hz,
                     fastest_region=flicker_region(fastest_hz)[0], row_period_us=period, refresh_hz=hz,
                     region=flicker_region(hz)[0], cpu_share=share, sustained=period >= fastest,
                     low_risk_below_us=1e6 / (LOW_RISK_HZ * rows), no_effect_below_us=1e6 / (NO_EFFECT_HZ * rows))
