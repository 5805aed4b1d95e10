"""COBS: Consistent Overhead Byte Stuffing.

S. Cheshire and M. Baker, "Consistent Overhead Byte Stuffing", IEEE/ACM Transactions on Networking
7(2):159-172, 1999. The encoder is the paper's ``StuffData`` algorithm: the data is taken as if a zero
followed it, split at every zero into blocks; each block is written as a code byte (block length + 1)
and its bytes; a block of 254 non-zero bytes gets code 0xFF and no implied zero. Because the paper's
encoder always finishes the last block, a run of 254 non-zero bytes at the very end is followed by a
lone 0x01 code. The decoder accepts that form and the shorter one some encoders emit without the
final 0x01, so either end may use either encoder.
"""
from __future__ import annotations

__all__ = ["encode", "decode", "CobsError", "max_encoded_len"]


class CobsError(ValueError):
    """A block that is not valid COBS (a zero inside, or a code running past the end)."""


def max_encoded_len(n: int) -> int:
    """Worst case size of ``encode`` of ``n`` bytes: one code byte per started 254 bytes, plus one
    (the paper's bound, section 3)."""
    return n + n // 254 + 1


def encode(data: bytes | bytearray | memoryview) -> bytes:
    """COBS-encode ``data``; the result contains no 0x00 (the caller appends the delimiter)."""
    data = bytes(data)
    out = bytearray()
    start = 0
    n = len(data)
    while True:
        # One block: up to 254 non-zero bytes, ended by a zero, by the 254-byte limit or by the end.
        zero = data.find(b"\x00", start, start + 254)
        if zero < 0:
            end = min(start + 254, n)
            out.append(end - start + 1)
            out += data[start:end]
            if end - start == 254:          # code 0xFF: no implied zero; the paper starts a new block
                start = end
                continue
            return bytes(out)
        out.append(zero - start + 1)
        out += data[start:zero]
        start = zero + 1


def decode(block: bytes | bytearray | memoryview) -> bytes:
    """Inverse of :func:`encode` for one block without its 0x00 delimiter."""
    block = bytes(block)
    if b"\x00" in block:
        raise CobsError(f"zero byte inside a COBS block at offset {block.index(0)}")
    out = bytearray()
    i, n = 0, len(block)
    if n == 0:
        raise CobsError("empty COBS block")
    while i < n:
        code = block[i]
        end = i + code
        if end > n:
            raise CobsError(f"COBS code 0x{code:02X} at offset {i} runs past the end of the block ({n} bytes)")
        out += block[i + 1:end]
        i = end
        if code != 0xFF and i < n:
            out.append(0)
    return bytes(out)
