"""UDP frames of the plant server (ffwd-plant-server) and a client for tests and tools.

Frame layout (little-endian, no padding; csrc/programs/sim_frame.h is the C side):

    offset  size  field
     0      4     magic b"FFWD"
     4      1     version (1)
     5      1     kind: 1 command, 2 state, 3 stats request, 4 stats, 5 reject
     6      2     n, number of values (uint16)
     8      4     sequence number (uint32)
    12      4     flags (uint32): 0 in requests; state frames: bit 0 braked by the
                  watchdog, bit 1 torque saturated in the last step
    16      8     timestamp (uint64 ns; the server echoes the request's)
    24      8n    values (float64)
    24+8n   4     CRC-32 of bytes 0 .. 23+8n (zlib.crc32)

Command: n = dof torques. State reply: values t, q[dof], qd[dof], tau[dof] (the
measured state after the step and the applied torque). Stats request: n = 0; the
reply's values are STATS_FIELDS in order. Reject reply: one value, the REASONS code.
"""
import socket
import struct
import subprocess
import time
import zlib
from dataclasses import dataclass

import numpy as np

__all__ = ["Frame", "encode", "decode", "COMMAND", "STATE", "STATS_REQUEST", "STATS", "REJECT",
           "REASONS", "STATS_FIELDS", "MAX_VALUES", "PlantClient", "start_server", "FrameError"]

MAGIC = b"FFWD"
VERSION = 1
COMMAND, STATE, STATS_REQUEST, STATS, REJECT = 1, 2, 3, 4, 5
REASONS = {1: "short", 2: "oversized", 3: "malformed", 4: "bad_version", 5: "bad_checksum",
           6: "duplicate", 7: "out_of_order"}
STATS_FIELDS = ("received", "accepted", "short", "oversized", "malformed", "bad_version",
                "bad_checksum", "duplicate", "out_of_order", "stats_requests", "watchdog_trips",
                "steps", "braked_steps", "saturated_steps", "t")
MAX_DOF = 16
MAX_VALUES = 1 + 3 * MAX_DOF
HEADER = struct.Struct("<4sBBHIIQ")      # 24 bytes
MIN_LEN = HEADER.size + 4
MAX_LEN = MIN_LEN + 8 * MAX_VALUES
DEFAULT_PORT = 47017


class FrameError(ValueError):
    """A received frame is not valid; .reason is one of REASONS' names."""

    def __init__(self, reason, text):
        super().__init__(text)
        self.reason = reason


@dataclass(frozen=True)
class Frame:
    kind: int
    seq: int
    values: np.ndarray
    flags: int = 0
    stamp: int = 0


def encode(kind, seq, values=(), flags=0, stamp=0, version=VERSION):
    """Bytes of a frame (the checksum included)."""
    v = np.ascontiguousarray(values, dtype="<f8").ravel()
    head = HEADER.pack(MAGIC, version, kind, len(v), seq & 0xFFFFFFFF, flags & 0xFFFFFFFF,
                       stamp & 0xFFFFFFFFFFFFFFFF)
    body = head + v.tobytes()
    return body + struct.pack("<I", zlib.crc32(body) & 0xFFFFFFFF)


def decode(data):
    """A Frame from bytes, checked in the server's order; FrameError otherwise."""
    if len(data) < MIN_LEN:
        raise FrameError("short", f"frame of {len(data)} bytes, at least {MIN_LEN} needed")
    if len(data) > MAX_LEN:
        raise FrameError("oversized", f"frame of {len(data)} bytes, at most {MAX_LEN}")
    magic, version, kind, n, seq, flags, stamp = HEADER.unpack_from(data)
    if magic != MAGIC:
        raise FrameError("malformed", f"bad magic {magic!r}")
    if version != VERSION:
        raise FrameError("bad_version", f"version {version}, expected {VERSION}")
    (crc,) = struct.unpack_from("<I", data, len(data) - 4)
    if zlib.crc32(data[:-4]) & 0xFFFFFFFF != crc:
        raise FrameError("bad_checksum", "CRC-32 mismatch")
    if n > MAX_VALUES or len(data) != MIN_LEN + 8 * n:
        raise FrameError("malformed", f"n = {n} does not match the length {len(data)}")
    if not COMMAND <= kind <= REJECT:
        raise FrameError("malformed", f"unknown kind {kind}")
    values = np.frombuffer(data, dtype="<f8", count=n, offset=HEADER.size).astype(float)
    if not np.all(np.isfinite(values)):
        raise FrameError("malformed", "non-finite value")
    return Frame(kind, seq, values, flags, stamp)


@dataclass(frozen=True)
class State:
    t: float
    q: np.ndarray
    qd: np.ndarray
    tau: np.ndarray
    braked: bool
    saturated: bool
    seq: int


class PlantClient:
    """Talks to a plant server: command(tau) -> State; stats() -> dict; send_raw(bytes)."""

    def __init__(self, host="127.0.0.1", port=DEFAULT_PORT, dof=None, timeout=1.0):
        self.addr = (host, int(port))
        self.dof = dof
        self.sock = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
        self.sock.settimeout(timeout)
        self.seq = 0

    def close(self):
        self.sock.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def send_raw(self, data):
        """Send bytes as they are and return the server's reply Frame."""
        self.sock.sendto(bytes(data), self.addr)
        return self.receive()

    def receive(self):
        data, _ = self.sock.recvfrom(65536)
        return decode(data)

    def command(self, tau, seq=None):
        """Send one torque command (next sequence number unless given); the reply as a
        State, or FrameError("rejected:<reason>") when the server rejects it."""
        tau = np.asarray(tau, dtype=float)
        if seq is None:
            self.seq = (self.seq + 1) & 0xFFFFFFFF
            seq = self.seq
        reply = self.send_raw(encode(COMMAND, seq, tau, stamp=time.monotonic_ns()))
        return self._state(reply)

    def _state(self, reply):
        if reply.kind == REJECT:
            reason = REASONS.get(int(reply.values[0]), "unknown")
            raise FrameError(reason, f"rejected: {reason}")
        if reply.kind != STATE or (len(reply.values) - 1) % 3:
            raise FrameError("malformed", f"unexpected reply kind {reply.kind}")
        n = (len(reply.values) - 1) // 3
        v = reply.values
        return State(float(v[0]), v[1:1 + n], v[1 + n:1 + 2 * n], v[1 + 2 * n:],
                     bool(reply.flags & 1), bool(reply.flags & 2), reply.seq)

    def stats(self):
        reply = self.send_raw(encode(STATS_REQUEST, 0))
        if reply.kind != STATS:
            raise FrameError("malformed", f"unexpected reply kind {reply.kind}")
        return {k: (float(v) if k == "t" else int(v)) for k, v in zip(STATS_FIELDS, reply.values)}


def start_server(model_file, *, port=0, rate_hz=1000.0, mode="lockstep", watchdog_ms=100.0,
                 extra=(), exe=None):
    """Start ffwd-plant-server on loopback; returns (process, port). Stop it with
    process.terminate() (it prints its stats as JSON on exit)."""
    from .loop import find_program
    exe = exe or find_program("ffwd-plant-server")
    cmd = [exe, "--model", str(model_file), "--port", str(int(port)), "--rate", repr(float(rate_hz)),
           "--mode", mode, "--watchdog-ms", repr(float(watchdog_ms)), *map(str, extra)]
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    line = proc.stdout.readline().split()
    if len(line) != 3 or line[0] != "listening":
        proc.kill()
        err = proc.stderr.read().strip()
        raise RuntimeError(f"ffwd-plant-server did not start: {err or line}")
    return proc, int(line[2])
