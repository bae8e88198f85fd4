"""Log import, checks and filtering (ffwd/identify/logs.py): every bad input has a test
that asserts its message."""
import numpy as np
import pytest

from ffwd.identify import from_log, prepare, random_excitation, read_log, two_link_arm
from ffwd.identify.synthetic import write_synthetic_log

RATE = 100.0


@pytest.fixture(scope="module")
def robot():
    return two_link_arm()


def _write(path, robot, duration=12.0, noise=0.0, seed=0, rate=RATE):
    tr = random_excitation(robot, period=6.0, harmonics=3, seed=seed)
    t = np.arange(0.0, duration, 1.0 / rate)
    q, qd, qdd = tr.evaluate(t)
    write_synthetic_log(path, robot, t, q, qd, qdd, tau_noise=noise, seed=seed)
    return path


def _lines(path):
    return path.read_text().splitlines()


def _put(path, lines):
    path.write_text("\n".join(lines) + "\n")


@pytest.fixture()
def good(tmp_path, robot):
    return _write(tmp_path / "log.csv", robot)


def test_good_log_reads(good, robot):
    log = read_log(good, robot)
    assert log.q.shape == (1200, 2) and log.tau.shape == (1200, 2) and log.qd is None
    assert log.rate == pytest.approx(RATE)


def test_missing_column(good, robot):
    lines = _lines(good)
    head = lines[0].split(",")
    k = head.index("tau_j2")
    _put(good, [",".join(c for i, c in enumerate(r.split(",")) if i != k) for r in lines])
    with pytest.raises(ValueError, match=r"log.csv: missing column 'tau_j2'"):
        read_log(good, robot)


def test_missing_time_column(good, robot):
    lines = _lines(good)
    lines[0] = lines[0].replace("t,", "time,", 1)
    _put(good, lines)
    with pytest.raises(ValueError, match=r"missing column 't'"):
        read_log(good, robot)


def test_nan_is_located(good, robot):
    lines = _lines(good)
    cells = lines[10].split(",")
    cells[1] = "nan"
    lines[10] = ",".join(cells)
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 11 \(t = 0\.09 s\), column 'q_j1': not a number"):
        read_log(good, robot)


def test_empty_cell_is_located(good, robot):
    lines = _lines(good)
    cells = lines[20].split(",")
    cells[-1] = ""
    lines[20] = ",".join(cells)
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 21 .*column 'tau_j2': empty"):
        read_log(good, robot)


def test_duplicated_time_stamp(good, robot):
    lines = _lines(good)
    lines.insert(31, lines[30])
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 32, column 't': time stamp 0\.29 s repeats "
                                         r"line 31"):
        read_log(good, robot)


def test_non_monotonic_time(good, robot):
    lines = _lines(good)
    lines[40], lines[41] = lines[41], lines[40]
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 42, column 't': time 0\.39 s goes backwards"):
        read_log(good, robot)


def test_gap(good, robot):
    lines = _lines(good)
    del lines[500:530]
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 501, column 't': gap of 0\.31 s between "
                                         r"4\.98 s and 5\.29 s"):
        read_log(good, robot)


def test_small_jitter_is_resampled(good, robot):
    lines = _lines(good)
    cells = lines[100].split(",")
    cells[0] = repr(float(cells[0]) + 0.003)
    lines[100] = ",".join(cells)
    _put(good, lines)
    log = read_log(good, robot)
    assert log.resampled
    np.testing.assert_allclose(np.diff(log.t), 0.01, rtol=1e-9)


def test_too_few_samples(tmp_path, robot):
    path = _write(tmp_path / "short.csv", robot, duration=0.3)
    with pytest.raises(ValueError, match=r"short.csv: only 30 samples; a log needs at least 50"):
        read_log(path, robot)


def test_too_short_for_the_parameters(tmp_path, robot):
    path = _write(tmp_path / "short.csv", robot, duration=1.0, rate=1000.0)
    with pytest.raises(ValueError, match=r"short.csv: log too short: 0.999 s give 4 samples "
                                         r"x 2 joints = 8 equations after filtering at 2 Hz, "
                                         r"need 44 \(4 x 11 base parameters\)"):
        from_log(robot, path, cutoff=2.0, consistent=False)


def test_non_exciting_log(tmp_path, robot):
    # only joint 1 moves: joint 2's parameters are not excited
    t = np.arange(0.0, 12.0, 1.0 / RATE)
    w = 2 * np.pi / 6.0
    q = np.column_stack([0.8 * np.sin(w * t), np.zeros_like(t)])
    qd = np.column_stack([0.8 * w * np.cos(w * t), np.zeros_like(t)])
    qdd = np.column_stack([-0.8 * w * w * np.sin(w * t), np.zeros_like(t)])
    path = tmp_path / "still.csv"
    write_synthetic_log(path, robot, t, q, qd, qdd, tau_noise=0.1)
    with pytest.raises(ValueError, match=r"still.csv: the log does not excite the robot "
                                         r"enough: condition number .* \(limit 1e\+04\); least "
                                         r"excited: .*; move every joint"):
        from_log(robot, path, consistent=False)


def test_current_columns_use_torque_constant_and_gear_ratio(good, robot):
    ref = read_log(good, robot)
    lines = _lines(good)
    head = lines[0].split(",")
    k1, k2 = head.index("tau_j1"), head.index("tau_j2")
    kt = {"j1": 0.2, "j2": 0.1}
    out = [lines[0].replace("tau_j1", "i_j1").replace("tau_j2", "i_j2")]
    for r in lines[1:]:
        c = r.split(",")
        c[k1] = repr(float(c[k1]) / (kt["j1"] * 50.0))     # gear ratio 50 in two_link_arm
        c[k2] = repr(float(c[k2]) / (kt["j2"] * 50.0))
        out.append(",".join(c))
    _put(good, out)
    log = read_log(good, robot, torque_constants=kt)
    np.testing.assert_allclose(log.tau, ref.tau, rtol=1e-12, atol=1e-12)
    with pytest.raises(ValueError, match=r"column 'i_j1' is motor current: give the motor "
                                         r"torque constant of joint 'j1'"):
        read_log(good, robot)
    with pytest.raises(ValueError, match=r"no torque constant given for joint 'j2'"):
        read_log(good, robot, torque_constants={"j1": 0.2})


def test_partial_velocity_columns(good, robot):
    lines = _lines(good)
    lines = [lines[0] + ",qd_j1"] + [r + ",0" for r in lines[1:]]
    _put(good, lines)
    with pytest.raises(ValueError, match=r"missing column 'qd_j2' \(give qd for every joint"):
        read_log(good, robot)


def test_not_a_number_text(good, robot):
    lines = _lines(good)
    c = lines[5].split(",")
    c[2] = "abc"
    lines[5] = ",".join(c)
    _put(good, lines)
    with pytest.raises(ValueError, match=r"line 6 .*column 'q_j2': not a number \('abc'\)"):
        read_log(good, robot)


def test_filter_keeps_the_signal_and_derivatives(good, robot):
    # zero-phase filtering leaves the slow trajectory unchanged; central differences of
    # the filtered q give qd and qdd (the trajectory's own derivatives as reference)
    log = read_log(good, robot)
    s = prepare(log)
    tr = random_excitation(robot, period=6.0, harmonics=3, seed=0)
    q, qd, qdd = tr.evaluate(s.t)
    k = s.keep
    assert np.max(np.abs(s.q[k] - q[k])) < 1e-4
    assert np.max(np.abs(s.qd[k] - qd[k])) < 1e-2 * np.max(np.abs(qd))
    assert np.max(np.abs(s.qdd[k] - qdd[k])) < 2e-2 * np.max(np.abs(qdd))
    # cutoff from the data: above the highest harmonic (3 / 6 s), below Nyquist
    assert 0.5 < s.cutoff < 0.8 * RATE / 2


def test_bad_cutoff(good, robot):
    log = read_log(good, robot)
    with pytest.raises(ValueError, match=r"cutoff 80 Hz must be between 0 and the Nyquist "
                                         r"frequency 50 Hz"):
        prepare(log, cutoff=80.0)


def test_logged_velocity_is_used(tmp_path, robot):
    tr = random_excitation(robot, period=6.0, harmonics=3, seed=0)
    t = np.arange(0.0, 12.0, 1.0 / RATE)
    q, qd, qdd = tr.evaluate(t)
    path = tmp_path / "withqd.csv"
    write_synthetic_log(path, robot, t, q, qd, qdd, with_qd=True)
    log = read_log(path, robot)
    np.testing.assert_allclose(log.qd, qd, atol=1e-9)
    s = prepare(log)
    k = s.keep
    _, qd_ref, qdd_ref = tr.evaluate(s.t)
    assert np.max(np.abs(s.qd[k] - qd_ref[k])) < 1e-3 * np.max(np.abs(qd_ref))
    assert np.max(np.abs(s.qdd[k] - qdd_ref[k])) < 2e-2 * np.max(np.abs(qdd_ref))
