"""Byte-level views of Arrow string arrays, for the numbers engine's fast paths.

A column of amounts may hold a million distinct strings; one numpy operation over the
bytes of all of them (a few milliseconds) replaces a pass of a string kernel per value.
The views are used only on ASCII text, where a byte is a character.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pyarrow as pa

ZERO, DOT, COMMA, MINUS = (ord(c) for c in "0.,-")


@dataclass(frozen=True)
class ByteView:
    """The bytes of a string array end to end, and where each string starts and ends."""

    data: np.ndarray     # uint8
    offsets: np.ndarray  # int64, one more than there are strings, starting at 0

    @classmethod
    def of(cls, array: pa.Array) -> ByteView:
        """A view of a string array without nulls (no copy of the bytes)."""
        n = len(array)
        if n == 0:
            return cls(np.zeros(0, np.uint8), np.zeros(1, np.int64))
        _, offsets_buffer, data_buffer = array.buffers()
        width = np.int64 if pa.types.is_large_string(array.type) else np.int32
        offsets = np.frombuffer(offsets_buffer, dtype=width)[array.offset:array.offset + n + 1]
        offsets = offsets.astype(np.int64)
        data = (np.frombuffer(data_buffer, dtype=np.uint8) if data_buffer is not None
                else np.zeros(0, np.uint8))
        return cls(data[offsets[0]:offsets[-1]], offsets - offsets[0])

    def __len__(self) -> int:
        return len(self.offsets) - 1

    @property
    def lengths(self) -> np.ndarray:
        return np.diff(self.offsets)

    def holds(self, chars: str) -> dict[str, np.ndarray]:
        """Per string, whether it holds each of up to eight ASCII ``chars`` (one pass:
        each char is a bit, or-ed over each string's bytes)."""
        n, data = len(self), self.data
        found = {c: np.zeros(n, bool) for c in chars}
        code = np.zeros(len(data) + 1, np.uint8)   # a last 0: empty strings at the end
        present = []
        for bit, char in enumerate(chars):
            flags = data == ord(char)
            if flags.any():   # a char no string holds costs one comparison
                code[:-1] |= flags.view(np.uint8) << bit
                present.append((bit, char))
        if not present:
            return found
        # reduceat gives an empty string the byte where it starts: masked out
        bits = np.bitwise_or.reduceat(code, self.offsets[:-1]) * (self.lengths > 0)
        for bit, char in present:
            found[char] = (bits & (1 << bit)) != 0
        return found

    def byte_at(self, positions: np.ndarray, inside: np.ndarray) -> np.ndarray:
        """The byte at absolute ``positions`` where ``inside`` holds, 0 elsewhere."""
        found = np.zeros(len(positions), np.uint8)
        found[inside] = self.data[positions[inside]]
        return found

    def first_bytes(self) -> np.ndarray:
        """Each string's first byte (0 for an empty string)."""
        return self.byte_at(self.offsets[:-1], self.lengths > 0)

    def compact(self, drop: np.ndarray) -> ByteView:
        """The strings with the flagged bytes removed."""
        return ByteView(self.data[~drop], self.offsets - self._running(drop)[self.offsets])

    @staticmethod
    def _running(flags: np.ndarray) -> np.ndarray:
        """How many flagged bytes come before each position (one more than bytes)."""
        # 32 bits where the count fits: half the memory traffic of 64
        width = np.int32 if len(flags) < 2**31 - 1 else np.int64
        running = np.zeros(len(flags) + 1, width)
        np.cumsum(flags.view(np.uint8), out=running[1:])
        return running

    def to_arrow(self) -> pa.Array:
        wide = len(self.data) >= 2**31 - 1
        kind, width = (pa.large_string(), np.int64) if wide else (pa.string(), np.int32)
        data = pa.py_buffer(np.ascontiguousarray(self.data))
        return pa.Array.from_buffers(kind, len(self), [
            None, pa.py_buffer(self.offsets.astype(width)), data])
