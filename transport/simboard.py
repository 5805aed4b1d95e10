"""The receiver firmware in the AVR simulator: build it, start the harness, read its records.

``firmware_stub/`` holds the firmware and the simavr harness (a C program linking simavr's library).
This module is the Python side used by ``rowcast sim`` and the simulator-in-the-loop tests::

    build_dir = build(tmp_folder)                       # make firmware + harness (if out of date)
    with SimBoard.start(profile, build_dir=build_dir, records=path) as board:
        link = Link(board.port, profile); ...            # the pty is a serial port like any other
        board.mark("frames sent"); board.stall()
    recs = read_records(path)                            # latches, output-enable, resets, marks

Records carry simulated cycle counts (16 MHz), never wall time.
"""
from __future__ import annotations

import os
import shutil
import subprocess
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from composer.bundled import data_path
from composer.errors import LinkError
from composer.profile import Profile
from composer.wiring import chain_to_shift_order

__all__ = ["FIRMWARE_DIR", "F_CPU", "build", "harness_path", "firmware_path", "SimBoard",
           "Records", "IsrStat", "read_records", "parse_records", "latched_shift_bytes", "tools_missing"]

FIRMWARE_DIR = data_path("transport.firmware_stub")
F_CPU = 16_000_000          # the board layer's clock (firmware_stub/board/avr328p)
PREFIX = "@rc "
_TOOLS = ("make", "avr-gcc", "avr-objcopy", "avr-size", "gcc")


def tools_missing() -> list[str]:
    """Build tools not on PATH (the simavr headers are checked by the build itself)."""
    missing = [t for t in _TOOLS if shutil.which(t) is None]
    if not Path("/usr/include/simavr/sim_avr.h").exists():
        missing.append("libsimavr-dev (simavr headers)")
    return missing


def harness_path(build_dir: Path) -> Path:
    return Path(build_dir) / "rowcast-harness"


def firmware_path(build_dir: Path) -> Path:
    return Path(build_dir) / "rowcast-receiver.elf"


def build(build_dir: Path, targets: tuple[str, ...] = ("firmware", "harness"),
          make_vars: tuple[str, ...] = ()) -> Path:
    """Run ``make`` in firmware_stub/ for ``targets`` into ``build_dir``; returns ``build_dir``.
    There is no default folder: the sources may be an installed, read-only package (``rowcast sim`` uses
    the user's cache folder, ``transport.simcache``; tests use a temporary one).
    ``make_vars``: e.g. ``("ROWS=8", "BYTES_PER_ROW=12")`` for another capacity (firmware_stub/Makefile)."""
    missing = tools_missing()
    if missing:
        raise LinkError(f"cannot build the simulated board: missing {', '.join(missing)}")
    cmd = ["make", "-s", "-C", str(FIRMWARE_DIR), f"BUILD={Path(build_dir).resolve()}", *make_vars, *targets]
    done = subprocess.run(cmd, capture_output=True, text=True)
    if done.returncode != 0:
        last = (done.stderr.strip().splitlines() or ["(no output)"])[-1]
        raise LinkError(f"building the simulated board failed: {last}")
    return Path(build_dir)


class SimBoard:
    """A running harness process. Use :meth:`start`; stop with :meth:`stop` or a ``with`` block."""

    def __init__(self, proc: subprocess.Popen, port: str, link: str | None) -> None:
        self.proc = proc
        self.port = port            # the pty slave path
        self.link = link            # a symlink to it, if asked for

    @classmethod
    def start(cls, profile: Profile | None = None, *, build_dir: Path, registers: int | None = None, records: Path | None = None, link: Path | None = None,
              realtime: bool = False, max_cycles: int = 0, timeout: float = 10.0,
              spi_bits: bool = False, firmware: Path | None = None) -> "SimBoard":
        """``spi_bits``: also record every byte as it left on the serial data line (``Records.spi_bits``).
        ``firmware``: another ELF than the build folder's (a build with another capacity)."""
        if registers is None:
            registers = len(profile.chain.registers) if profile is not None else 3
        harness, elf = harness_path(build_dir), Path(firmware) if firmware is not None else firmware_path(build_dir)
        for need in (harness, elf):
            if not need.exists():
                raise LinkError(f"{need}: not built (build() it first; rowcast sim builds into its cache folder)")
        cmd = [str(harness), str(elf), "--registers", str(registers), "--commands"]
        if records is not None:
            cmd += ["--records", str(records)]
        else:
            cmd += ["--records", os.devnull]
        if link is not None:
            cmd += ["--pty-link", str(link)]
        if realtime:
            cmd.append("--realtime")
        if spi_bits:
            cmd.append("--spi-bits")
        if max_cycles:
            cmd += ["--max-cycles", str(max_cycles)]
        proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                text=True, bufsize=1)
        deadline = time.monotonic() + timeout
        assert proc.stdout is not None
        while time.monotonic() < deadline:
            line = proc.stdout.readline()
            if not line:
                err = proc.stderr.read().strip().splitlines() if proc.stderr else []
                raise LinkError(f"the simulator harness exited: {err[-1] if err else 'no message'}")
            if line.startswith(PREFIX + "pty "):
                parts = line.split()
                return cls(proc, parts[2], None if parts[3] == "-" else parts[3])
        proc.kill()
        raise LinkError("the simulator harness did not report its port in time")

    def command(self, text: str) -> None:
        if self.proc.poll() is not None or self.proc.stdin is None:
            raise LinkError("the simulator harness is not running")
        self.proc.stdin.write(text + "\n")
        self.proc.stdin.flush()

    def mark(self, text: str) -> None:
        """Put a host-side event on the simulated cycle axis (``Records.marks``)."""
        self.command(f"mark {text}")

    def stall(self) -> None:
        """Switch the firmware's row-tick interrupt off: a scan stall for the watchdog to catch."""
        self.command("stall")

    def now(self, timeout: float = 10.0) -> int:
        """The simulated cycle count at this moment."""
        self.command("now")
        assert self.proc.stdout is not None
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            line = self.proc.stdout.readline()
            if not line:
                break
            if line.startswith(PREFIX + "now "):
                return int(line.split()[2])
        raise LinkError("the simulator harness stopped answering")

    def wait_cycles(self, cycles: int, timeout: float = 60.0) -> int:
        """Let at least ``cycles`` simulated cycles pass (however long that takes in wall time)."""
        target = self.now() + cycles
        deadline = time.monotonic() + timeout
        while (now := self.now()) < target:
            if time.monotonic() > deadline:
                raise LinkError(f"the simulation did not reach cycle {target} in {timeout:g} s")
            time.sleep(0.01)
        return now

    def stop(self, timeout: float = 10.0) -> int:
        if self.proc.poll() is None:
            try:
                self.command("quit")
            except (LinkError, BrokenPipeError, OSError):
                pass
            try:
                self.proc.wait(timeout)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        for stream in (self.proc.stdin, self.proc.stdout, self.proc.stderr):
            if stream is not None:
                stream.close()
        return self.proc.returncode

    def __enter__(self) -> "SimBoard":
        return self

    def __exit__(self, *exc: object) -> None:
        self.stop()


@dataclass(frozen=True)
class IsrStat:
    vector: int
    count: int
    min: int
    mean: float
    max: int
    total: int
    window: int             # cycles the statistics cover


@dataclass
class Records:
    """What the harness wrote. ``latch_bytes`` is ``(N, registers)`` in chain order (nearest the
    microcontroller first); ``oe`` is ``(M, 2)``: cycle, 1 active / 0 inactive, in order."""

    latch_cycles: np.ndarray
    latch_bytes: np.ndarray
    oe: np.ndarray
    resets: list[int] = field(default_factory=list)
    stalls: list[int] = field(default_factory=list)
    marks: dict[str, int] = field(default_factory=dict)
    isr: list[IsrStat] = field(default_factory=list)
    busy: tuple[int, int, int] | None = None     # cycles in the scan handlers, window, outer entries
    spi_collisions: int | None = None      # SPDR writes the simulated SPI refused (WCOL)
    end: int | None = None
    spi_cycles: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))
    spi_bits: np.ndarray = field(default_factory=lambda: np.zeros((0, 8), np.uint8))   # (N, 8): first bit sent first

    def oe_at(self, cycle: int) -> int:
        """Output-enable state in force at ``cycle``."""
        i = int(np.searchsorted(self.oe[:, 0], cycle, side="right")) - 1
        return int(self.oe[i, 1]) if i >= 0 else 0


def parse_records(lines: list[str] | str) -> Records:
    if isinstance(lines, str):
        lines = lines.splitlines()
    cycles: list[int] = []
    hexes: list[str] = []
    oe: list[tuple[int, int]] = []
    spi_cycles: list[int] = []
    spi_bits: list[str] = []
    recs = Records(np.zeros(0, np.int64), np.zeros((0, 0), np.uint8), np.zeros((0, 2), np.int64))
    for line in lines:
        if not line.startswith(PREFIX):
            continue            # simavr's own output
        parts = line[len(PREFIX):].split()
        kind = parts[0]
        if kind == "latch":
            cycles.append(int(parts[1]))
            hexes.append(parts[2])
        elif kind == "oe":
            oe.append((int(parts[1]), int(parts[2])))
        elif kind == "spi":
            spi_cycles.append(int(parts[1]))
            spi_bits.append(parts[2])
        elif kind == "reset":
            recs.resets.append(int(parts[1]))
        elif kind == "stall":
            recs.stalls.append(int(parts[1]))
        elif kind == "mark":
            recs.marks[" ".join(parts[2:])] = int(parts[1])
        elif kind == "isr":
            v, n, lo, mean, hi, total, window = parts[1:8]
            recs.isr.append(IsrStat(int(v), int(n), int(lo), float(mean), int(hi), int(total), int(window)))
        elif kind == "busy":
            recs.busy = (int(parts[1]), int(parts[2]), int(parts[3]))
        elif kind == "spi-collisions":
            recs.spi_collisions = int(parts[1])
        elif kind == "end":
            recs.end = int(parts[1])
    recs.latch_cycles = np.array(cycles, np.int64)
    if hexes:
        recs.latch_bytes = np.frombuffer(bytes.fromhex("".join(hexes)), np.uint8).reshape(len(hexes), -1)
    recs.oe = np.array(oe, np.int64).reshape(-1, 2)
    if spi_bits:
        recs.spi_cycles = np.array(spi_cycles, np.int64)
        recs.spi_bits = (np.frombuffer("".join(spi_bits).encode(), np.uint8) - ord("0")).reshape(-1, 8)
    return recs


def read_records(path: Path) -> Records:
    return parse_records(Path(path).read_text().splitlines())


def latched_shift_bytes(records: Records, profile: Profile) -> np.ndarray:
    """Latched states in shift order, as the bytes that were shifted (what
    ``composer.wiring.decode_shift_bytes`` reads). The records hold output states (bit k = Qk); in an
    lsb-first chain byte bit n ends on Q(7 - n), so those are mirrored back."""
    states = chain_to_shift_order(profile, records.latch_bytes)
    if profile.chain.bit_order == "lsb-first":
        states = np.packbits(np.unpackbits(states[..., None], axis=-1)[..., ::-1], axis=-1)[..., 0]
    return states
