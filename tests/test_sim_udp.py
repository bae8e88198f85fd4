"""The UDP plant server (ffwd-plant-server): frame codec, rejection of every bad kind
of frame, determinism, watchdog. Servers run on loopback with an ephemeral port and
are stopped at the end of each test."""
import random
import struct
import time
import zlib

import numpy as np
import pytest

import ffwd
from ffwd.sim import udp
from ffwd.sim.flatmodel import write_model_file

from conftest import require_build

ROBOT_FILE = "examples/robots/six_axis.toml"


@pytest.fixture(scope="module")
def robot():
    import os
    return ffwd.load(os.path.join(os.path.dirname(__file__), "..", ROBOT_FILE))


@pytest.fixture(scope="module")
def model_file(robot, tmp_path_factory):
    return write_model_file(robot, tmp_path_factory.mktemp("udp") / "six_axis.txt")


@pytest.fixture
def server(model_file):
    """start(**options) -> (client, process); every server is stopped at teardown."""
    from ffwd.sim.loop import find_program
    try:
        find_program("ffwd-plant-server")
    except FileNotFoundError as exc:
        require_build(str(exc))
    procs, clients = [], []

    def start(**options):
        proc, port = udp.start_server(model_file, **options)
        procs.append(proc)
        client = udp.PlantClient(port=port, timeout=5.0)
        clients.append(client)
        return client, proc

    yield start
    for c in clients:
        c.close()
    for p in procs:
        if p.poll() is None:
            p.terminate()
            try:
                p.wait(timeout=5)
            except Exception:
                p.kill()
                p.wait()
        assert p.returncode in (0, -15), f"server exit code {p.returncode}"


def test_codec_round_trip_and_crc():
    data = udp.encode(udp.COMMAND, 7, [1.0, -2.5, 3.0], flags=0, stamp=123456789)
    assert len(data) == 28 + 8 * 3
    # the checksum is zlib's CRC-32 (reference: zlib) over everything before it
    assert struct.unpack("<I", data[-4:])[0] == zlib.crc32(data[:-4])
    f = udp.decode(data)
    assert (f.kind, f.seq, f.stamp) == (udp.COMMAND, 7, 123456789)
    assert f.values.tolist() == [1.0, -2.5, 3.0]
    for bad, reason in [(data[:10], "short"), (data + bytes(500), "oversized"),
                        (b"XXXX" + data[4:], "malformed"),
                        (data[:4] + b"\x02" + data[5:], "bad_version"),
                        (data[:-1] + bytes([data[-1] ^ 1]), "bad_checksum")]:
        with pytest.raises(udp.FrameError) as info:
            udp.decode(bad)
        assert info.value.reason == reason


def _with_crc(body):
    return body + struct.pack("<I", zlib.crc32(body))


class FrameMix:
    """Builds good and bad command frames and predicts the server's verdict on each."""

    def __init__(self, dof, seed):
        self.rng = random.Random(seed)
        self.dof = dof
        self.last = None           # last accepted sequence number
        self.last_frame = None
        self.next_seq = 1000

    def good(self):
        self.next_seq += self.rng.randint(1, 3)   # gaps are fine (lost frames)
        tau = [self.rng.uniform(-30, 30) for _ in range(self.dof)]
        frame = udp.encode(udp.COMMAND, self.next_seq, tau, stamp=self.next_seq)
        self.last, self.last_frame = self.next_seq, frame
        return frame, None

    def bad(self, kind):
        r, n = self.rng, self.dof
        seq = self.next_seq + r.randint(1, 5)         # would be in order: only the flaw counts
        tau = [r.uniform(-30, 30) for _ in range(n)]
        if kind == "short":
            return bytes(r.getrandbits(8) for _ in range(r.randint(0, 27))), "short"
        if kind == "oversized":
            if r.random() < 0.5:
                return udp.encode(udp.COMMAND, seq, np.zeros(60)), "oversized"
            return bytes(r.getrandbits(8) for _ in range(r.randint(udp.MAX_LEN + 1, 3000))), "oversized"
        if kind == "bad_version":
            head = udp.HEADER.pack(b"FFWD", r.choice([0, 2, 7, 255]), udp.COMMAND, n, seq, 0, 0)
            return _with_crc(head + np.array(tau, "<f8").tobytes()), "bad_version"
        if kind == "bad_checksum":
            frame = bytearray(udp.encode(udp.COMMAND, seq, tau))
            i = r.randrange(len(frame))
            if i < 5:
                i = len(frame) - 1 - r.randrange(4)   # keep magic and version intact
            frame[i] ^= 1 << r.randrange(8)
            return bytes(frame), "bad_checksum"
        if kind == "duplicate":
            return self.last_frame, "duplicate"
        if kind == "out_of_order":
            old = self.last - r.randint(1, 50)
            return udp.encode(udp.COMMAND, old, tau), "out_of_order"
        # malformed, with a valid checksum
        variant = r.randrange(7)
        if variant == 0:      # bad magic
            head = udp.HEADER.pack(b"FFXD", 1, udp.COMMAND, n, seq, 0, 0)
            return _with_crc(head + np.array(tau, "<f8").tobytes()), "malformed"
        if variant == 1:      # wrong number of torques
            return udp.encode(udp.COMMAND, seq, tau[:-1]), "malformed"
        if variant == 2:      # unknown kind
            return udp.encode(r.choice([0, 6, 9, 200]), seq, tau), "malformed"
        if variant == 3:      # length does not match n
            head = udp.HEADER.pack(b"FFWD", 1, udp.COMMAND, n, seq, 0, 0)
            return _with_crc(head + np.array(tau + [1.0], "<f8").tobytes()), "malformed"
        if variant == 4:      # non-finite torque
            tau[r.randrange(n)] = r.choice([float("nan"), float("inf"), -float("inf")])
            return udp.encode(udp.COMMAND, seq, tau), "malformed"
        if variant == 5:      # flags set in a request
            return udp.encode(udp.COMMAND, seq, tau, flags=1), "malformed"
        return udp.encode(udp.STATE, seq, tau), "malformed"   # a reply kind sent to the server


def test_ten_thousand_mixed_frames(server, robot):
    """10,000 frames mixing every malformed kind with good ones: each verdict as
    predicted, counts match, the plant ends exactly where the good frames alone take it."""
    kinds = ["short", "oversized", "malformed", "bad_version", "bad_checksum", "duplicate",
             "out_of_order"]
    mix = FrameMix(robot.dof, seed=2024)
    frames = [mix.good()]
    rng = random.Random(7)
    while len(frames) < 10000:
        if rng.random() < 0.5:
            frames.append(mix.good())
        else:
            frames.append(mix.bad(rng.choice(kinds)))
    expected = {k: sum(1 for _, why in frames if why == k) for k in kinds}
    good = [f for f, why in frames if why is None]
    assert all(expected[k] > 100 for k in kinds) and len(good) > 4000

    client, proc = server(watchdog_ms=60000)
    last_state = None
    for data, why in frames:
        reply = client.send_raw(data)
        if why is None:
            assert reply.kind == udp.STATE
            last_state = reply
        else:
            assert reply.kind == udp.REJECT, why
            assert udp.REASONS[int(reply.values[0])] == why
    stats = client.stats()
    assert stats["received"] == 10000 + 1                 # the stats request itself counts
    assert stats["accepted"] == len(good) == stats["steps"]
    for k in kinds:
        assert stats[k] == expected[k], k
    assert proc.poll() is None, "server died"

    # the same plant driven by the good frames only
    client2, _ = server(watchdog_ms=60000)
    for data in good:
        reply2 = client2.send_raw(data)
    assert reply2.kind == udp.STATE
    assert np.array_equal(reply2.values, last_state.values)     # t, q, qd, tau bit for bit
    n = robot.dof
    print(f"\n10000 frames: {len(good)} good, rejected {expected}; "
          f"final t = {last_state.values[0]:.3f} s, q = {np.round(last_state.values[1:1 + n], 4)}")


def test_plant_matches_library_plant(server, robot):
    """The server's plant is the library's: same torques, same states (when ffwd._plant
    is built)."""
    from ffwd.sim.plant import _have_c, Plant
    if not _have_c():
        require_build("ffwd._plant is not importable")
    client, _ = server()
    local = Plant(robot, 1e-3, backend="c")
    rng = np.random.default_rng(3)
    for _ in range(200):
        tau = rng.uniform(-50, 50, robot.dof)
        s = client.command(tau)
        local.step(tau)
        q, qd = local.measure()
        assert np.array_equal(s.q, q) and np.array_equal(s.qd, qd)


def test_watchdog_brakes_and_releases(server, robot):
    client, _ = server(watchdog_ms=50)
    zero = np.zeros(robot.dof)
    for _ in range(300):                       # falls under gravity without torque
        before = client.command(zero)
    assert np.max(np.abs(before.qd)) > 0.1
    time.sleep(0.3)                            # no commands: the watchdog brakes
    stats = client.stats()
    assert stats["watchdog_trips"] == 1
    after = client.command(zero)               # releases and steps once from rest
    dt = 1e-3
    assert not after.braked
    # velocity restarted from zero: one step changes it by about dt * qdd only
    assert np.max(np.abs(after.qd)) < 0.2 * np.max(np.abs(before.qd))
    assert np.max(np.abs(after.q - before.q)) < 0.5 * dt * np.max(np.abs(before.qd))
    assert client.stats()["watchdog_trips"] == 1


def test_realtime_mode_holds_until_commanded(server, robot):
    client, _ = server(mode="realtime", watchdog_ms=1000)
    time.sleep(0.05)
    s0 = client.stats()
    assert s0["steps"] > 0 and s0["braked_steps"] == s0["steps"]   # braked until commanded
    state = client.command(np.zeros(robot.dof))
    assert not state.braked
    assert np.all(np.isfinite(state.q))


def test_server_refuses_bad_options(model_file, tmp_path):
    import subprocess
    from ffwd.sim.loop import find_program
    try:
        exe = find_program("ffwd-plant-server")
    except FileNotFoundError as exc:
        require_build(str(exc))
    bad_model = tmp_path / "bad.txt"
    bad_model.write_text(open(model_file).read().replace("dof 6", "dof x"))
    for args, words in [(["--model", str(bad_model)], "dof"),
                        (["--model", str(model_file), "--rate", "-5"], "--rate"),
                        (["--model", str(model_file), "--mode", "fast"], "--mode"),
                        (["--model", str(tmp_path / "missing.txt")], "missing.txt")]:
        p = subprocess.run([exe, *args, "--port", "0"], capture_output=True, text=True, timeout=10)
        assert p.returncode == 2
        lines = p.stderr.strip().splitlines()
        assert len(lines) == 1 and words in lines[0], p.stderr


def test_c_client_example(server, robot, tmp_path):
    """examples/c/plant_client.c builds with a plain C compiler and drives the server."""
    import shutil
    import subprocess
    cc = shutil.which("cc") or shutil.which("gcc")
    if cc is None:
        pytest.skip("no C compiler")
    import os
    src = os.path.join(os.path.dirname(__file__), "..", "examples", "c", "plant_client.c")
    exe = tmp_path / "plant-client"
    subprocess.run([cc, "-std=c99", "-O2", "-Wall", "-Wextra", "-Werror", "-o", str(exe), src],
                   check=True, capture_output=True)
    client, proc = server()
    port = client.addr[1]
    p = subprocess.run([str(exe), "127.0.0.1", str(port), str(robot.dof), "300", "0.2", "800", "40"],
                       capture_output=True, text=True, timeout=60)
    assert p.returncode == 0, p.stdout + p.stderr
    assert "accepted 300 rejected 0" in p.stdout
    assert client.stats()["accepted"] == 300
