"""A short, bounded libFuzzer run of the receiver's decoder under AddressSanitizer and
UndefinedBehaviorSanitizer (clang). The long run is in firmware_stub/README.md.

The target (firmware_stub/fuzz/fuzz_decoder.c) feeds arbitrary bytes to the core, with row ticks,
and traps when a frame buffer holds something the guard would refuse or the scan state leaves its
range; the sanitizers catch out-of-bounds access and undefined behaviour. Seeds are every wire
vector in transport/protocol_vectors.json.
"""
from __future__ import annotations

import json
import subprocess

from tests.conftest import ROOT, need_tool

FW = ROOT / "firmware_stub"


def test_bounded_fuzz_run_finds_nothing(tmp_path):
    need_tool("clang")
    need_tool("make")
    build = tmp_path / "build"
    subprocess.run(["make", "-s", "-C", str(FW), f"BUILD={build}", "fuzz"], check=True)
    corpus = tmp_path / "corpus"
    corpus.mkdir()
    vectors = json.loads((ROOT / "transport" / "protocol_vectors.json").read_text())
    seeds = [m["wire"] for m in vectors["messages"] if m["direction"] == "host-to-device"]
    seeds += [b["wire"] for b in vectors["bad_blocks"]]
    for i, wire in enumerate(seeds):
        for start in (0, 1):            # byte 0: fresh receiver or configured as bench-8x8
            (corpus / f"seed-{i:02d}-{start}").write_bytes(bytes((start,)) + bytes.fromhex(wire))
    done = subprocess.run([str(build / "fuzz_decoder"), "-seed=1", "-runs=40000", "-max_total_time=25",
                           "-max_len=600", f"-artifact_prefix={tmp_path}/", str(corpus)],
                          capture_output=True, text=True, timeout=120)
    tail = "\n".join(done.stderr.splitlines()[-15:])
    assert done.returncode == 0, f"the fuzzer found a failing input:\n{tail}"
    assert "Done" in done.stderr and not list(tmp_path.glob("crash-*")), tail
    # The run really executed inputs (a target that was never called would print no coverage).
    assert "cov:" in done.stderr, tail
