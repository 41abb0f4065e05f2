"""Write an echobench detector in Python: one function from frames to scores.

This module speaks the echobench external-detector protocol, version 1
(specified in the crate doc of ``crates/detectors/external/src/lib.rs``) on
stdin/stdout, so that a detector is only::

    import numpy as np
    import echobench_external as ebx

    def score_frames(frames, stream):
        # frames: (k, frame_len) float32 array, complex64 for I/Q, k >= 1
        return np.mean(np.abs(frames.astype(np.complex128)) ** 2, axis=1)

    ebx.run(score_frames, frame_len=256, hop=128, name="mean-power")

``run`` does the handshake, cuts the sample stream into frames of
``frame_len`` every ``hop`` samples whatever the block boundaries are,
calls the function once per block on the frames that block completes (in
order, so a callable object may keep state from frame to frame), stamps each
score with t_s = (index one past the frame's last sample) / fs, and answers.
An optional ``prefilter(samples, stream)`` runs on the continuous stream
before framing (stateful filters go there), and an optional ``start(stream)``
runs once after HELLO, before READY (set-up, or refusing a stream). For anything else, use
``Connection`` directly.

It strictly alternates: read a whole block, write the whole answer, flush,
so it never waits on the host while the host waits on it. ``print`` is sent
to stderr (stdout carries the protocol); an exception ends the program with
its traceback on stderr, which echobench quotes in its failure message.
Needs numpy only.
"""

import struct
import sys

import numpy as np

VERSION = 1
HOST_MAGIC = b"EBXH"
PROGRAM_MAGIC = b"EBXP"
TAG_BLOCK = b"BLCK"
TAG_END = b"END "
TAG_SCORE = b"SCOR"
TAG_DONE = b"DONE"
MAX_NAME_BYTES = 256

# One SCOR record: tag, t_s, value; packed, little-endian (20 bytes).
_SCORE_RECORD = np.dtype([("tag", "S4"), ("t_s", "<f8"), ("value", "<f8")])


class ProtocolError(Exception):
    """The host sent something this version of the protocol does not allow."""


class Stream:
    """What HELLO says about the stream."""

    def __init__(self, sample_rate_hz, carrier_hz, channels, adc_bits, max_block_values):
        self.sample_rate_hz = sample_rate_hz
        self.carrier_hz = carrier_hz
        self.channels = channels  # 1 = real, 2 = I/Q
        self.adc_bits = adc_bits
        self.max_block_values = max_block_values

    @property
    def iq(self):
        """True for I/Q streams (blocks are complex64, one value per sample instant)."""
        return self.channels == 2

    def __repr__(self):
        return (
            f"Stream(sample_rate_hz={self.sample_rate_hz}, carrier_hz={self.carrier_hz}, "
            f"channels={self.channels}, adc_bits={self.adc_bits})"
        )


class Connection:
    """The protocol over a pair of binary streams (stdin/stdout by default).

    With the default streams, ``sys.stdout`` is pointed at stderr, so a stray
    ``print`` cannot corrupt the protocol.
    """

    def __init__(self, host_in=None, host_out=None):
        if host_in is None:
            host_in = sys.stdin.buffer
        if host_out is None:
            host_out = sys.stdout.buffer
            sys.stdout = sys.stderr
        self._in = host_in
        self._out = host_out
        self.stream = None

    def _read(self, n, what):
        data = self._in.read(n)
        if data is None or len(data) != n:
            got = 0 if not data else len(data)
            raise ProtocolError(f"input ended after {got} of the {n} bytes of {what}")
        return data

    def handshake(self, name="", start=None):
        """Reads HELLO, calls ``start(stream)`` if given (it may raise to
        refuse the stream: the program then exits before READY, which
        echobench reports as a build error), answers READY with ``name``;
        returns the ``Stream``."""
        hello = self._read(40, "HELLO")
        if hello[:4] != HOST_MAGIC:
            raise ProtocolError(f"expected HELLO, got {hello[:4]!r}")
        version, rate, carrier, channels, bits, max_values, _ = struct.unpack("<IddIIII", hello[4:])
        if version != VERSION:
            raise ProtocolError(f"host speaks version {version}, this module speaks {VERSION}")
        if channels not in (1, 2):
            raise ProtocolError(f"unknown channel count {channels}")
        self.stream = Stream(rate, carrier, channels, bits, max_values)
        if start is not None:
            start(self.stream)
        encoded = name.encode("utf-8")[:MAX_NAME_BYTES]
        self._out.write(PROGRAM_MAGIC + struct.pack("<II", VERSION, len(encoded)) + encoded)
        self._out.flush()
        return self.stream

    def next_block(self):
        """The next block as float32 values (interleaved I, Q for I/Q), or
        ``None`` at END or end of input."""
        tag = self._in.read(4)
        if not tag or tag == TAG_END:
            return None
        if len(tag) != 4 or tag != TAG_BLOCK:
            raise ProtocolError(f"expected BLCK or END, got {tag!r}")
        (count,) = struct.unpack("<I", self._read(4, "a block length"))
        if count == 0 or count > self.stream.max_block_values:
            raise ProtocolError(f"block of {count} values")
        return np.frombuffer(self._read(4 * count, "a block"), dtype="<f4")

    def answer(self, t_s, values):
        """Writes one SCOR per (t_s, value), then DONE, and flushes."""
        t_s = np.asarray(t_s, dtype=np.float64)
        values = np.asarray(values, dtype=np.float64)
        records = np.empty(len(t_s), dtype=_SCORE_RECORD)
        records["tag"] = TAG_SCORE
        records["t_s"] = t_s
        records["value"] = values
        self._out.write(records.tobytes() + TAG_DONE)
        self._out.flush()


class Framer:
    """Frames of ``frame_len`` samples every ``hop``, across block boundaries.

    ``push`` returns the frames the new samples complete, as a (k, frame_len)
    array (views into an internal buffer; copy them to keep them), and the
    index one past each frame's last sample.
    """

    def __init__(self, frame_len, hop):
        if int(frame_len) < 1 or int(hop) < 1:
            raise ValueError("frame_len and hop must be at least 1")
        self.frame_len = int(frame_len)
        self.hop = int(hop)
        self._buffer = None
        self._buffer_start = 0  # stream index of _buffer[0]
        self._next_start = 0  # stream index where the next frame starts

    def push(self, samples):
        buffer = samples if self._buffer is None else np.concatenate((self._buffer, samples))
        end = self._buffer_start + len(buffer)
        available = end - self._next_start
        count = 0 if available < self.frame_len else (available - self.frame_len) // self.hop + 1
        offset = self._next_start - self._buffer_start
        if count:
            windows = np.lib.stride_tricks.sliding_window_view(buffer[offset:], self.frame_len)
            frames = windows[:: self.hop][:count]
        else:
            frames = np.empty((0, self.frame_len), dtype=buffer.dtype)
        ends = self._next_start + self.frame_len + self.hop * np.arange(count, dtype=np.int64)
        self._next_start += count * self.hop
        keep_from = self._next_start - self._buffer_start
        if keep_from >= len(buffer):
            # Samples before the next frame's start are never needed again.
            self._buffer = None
            self._buffer_start = end
        else:
            self._buffer = buffer[keep_from:].copy()
            self._buffer_start += keep_from
        return frames, ends


def run(score_frames, frame_len, hop, name="", prefilter=None, start=None):
    """Serves one stream: handshake, then every block until END.

    ``score_frames(frames, stream)`` gets a (k, frame_len) array, k >= 1
    (float32 for real streams, complex64 for I/Q, or whatever ``prefilter``
    returns), and returns k scores, higher = more likely motion.
    ``start(stream)``, if given, runs once before READY: set up state that
    depends on the stream there, or raise to refuse it.
    """
    connection = Connection()
    stream = connection.handshake(name, start)
    framer = Framer(frame_len, hop)
    no_scores = np.empty(0)
    while True:
        block = connection.next_block()
        if block is None:
            break
        samples = block.view(np.complex64) if stream.iq else block
        if prefilter is not None:
            samples = prefilter(samples, stream)
        frames, ends = framer.push(samples)
        if len(ends) == 0:
            connection.answer(no_scores, no_scores)
            continue
        values = np.asarray(score_frames(frames, stream), dtype=np.float64).reshape(-1)
        if len(values) != len(ends):
            raise ValueError(f"score_frames returned {len(values)} scores for {len(ends)} frames")
        connection.answer(ends / stream.sample_rate_hz, values)
