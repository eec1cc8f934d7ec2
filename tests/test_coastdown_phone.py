"""Coast-down analysis of a realistic 1 Hz phone / OBD log.

The outside reference is the generating model: m_inertial dv/dt =
-(f0 + f1 v + f2 (v + s w)^2) + s m g sin(theta), integrated with
scipy.integrate.solve_ivp for an invented 1400 kg car, three pairs of coasts
from 110 to 20 km/h, a 2 m/s wind along the road and a 0.3 % slope (downhill
in direction A). The log is what a phone or OBD logger writes: one sample per
second, speed rounded to whole km/h, reported 0.5 s late, timestamps with
±50 ms jitter, two or three fixes missing here and there, and one +10 km/h
spike.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from tractive.coastdown import CoastdownLog, analyze_coastdown
from tractive.errors import InputError

KMH = 1 / 3.6
TRUTH = np.array([140.0, 0.3, 0.033])   # f0 N, f1 N/(km/h), f2 N/(km/h)^2
MASS = 1400.0
G = 9.80665


def _timeline(wind_ms=2.0, grade=0.003, pairs=3, v_top_kmh=110.0, v_end_kmh=20.0):
    """Pieces (t_start, t_end, speed(t - t_start), direction sign) of the drive."""
    m = MASS * 1.03
    a, b, c = TRUTH[0], TRUTH[1] * 3.6, TRUTH[2] * 3.6 ** 2
    slope_n = MASS * G * grade / np.sqrt(1 + grade ** 2)
    vt, ve = v_top_kmh * KMH, v_end_kmh * KMH
    pieces, t0 = [], 0.0
    for k in range(2 * pairs):
        s = 1.0 if k % 2 == 0 else -1.0
        ta = (vt - 30 * KMH) / 0.8                      # accelerate at 0.8 m/s^2
        pieces.append((t0, t0 + ta, lambda tr: 30 * KMH + 0.8 * tr, s))
        t0 += ta
        pieces.append((t0, t0 + 4.0, lambda tr, vt=vt: np.full_like(tr, vt), s))
        t0 += 4.0

        def rhs(t, y, s=s):
            return [-(a + b * y[0] + c * (y[0] + s * wind_ms) ** 2 - s * slope_n) / m]

        def stop(t, y):
            return y[0] - ve
        stop.terminal = True
        sol = solve_ivp(rhs, (0.0, 2000.0), [vt], events=stop, dense_output=True,
                        rtol=1e-10, atol=1e-11, max_step=0.5)
        te = sol.t_events[0][0]
        pieces.append((t0, t0 + te, lambda tr, sol=sol: sol.sol(tr)[0], s))
        t0 += te
        pieces.append((t0, t0 + 12.5, lambda tr, ve=ve: ve + 0.8 * KMH * tr, -s))  # turn
        t0 += 12.5
    return pieces, t0


PIECES, DURATION = _timeline()


def phone_log(seed, *, lag_s=0.5, jitter_s=0.05, dropouts=3, brake_at_s=None):
    """1 Hz log, whole km/h, late by ``lag_s``, jittered timestamps, missing fixes.

    ``brake_at_s`` hides a brake touch (1.2 m/s^2 for 1.2 s, so 1.44 m/s lost)
    in a 4 s gap at that time.
    """
    rng = np.random.default_rng(seed)
    t_fix = np.arange(0.0, DURATION - 1.0, 1.0) + rng.uniform(0.0, 1.0)
    t_v = np.clip(t_fix - lag_s, 0.0, None)
    v = np.full(t_fix.shape, np.nan)
    sign = np.zeros(t_fix.shape)
    coast = np.zeros(t_fix.shape, bool)
    for n, (t_a, t_b, speed, s) in enumerate(PIECES):
        i = (t_v >= t_a) & (t_v < t_b)
        v[i] = speed(t_v[i] - t_a)
        sign[i] = s
        coast |= i & (n % 4 == 2) & (t_v > t_a + 10.0) & (t_v < t_b - 10.0)
    if brake_at_s is not None:
        v[t_v > brake_at_s + 1.2] -= 1.2 * 1.2
    v = np.round(v * 3.6) / 3.6
    keep = np.ones(t_fix.shape, bool)
    coasting = np.flatnonzero(coast)
    for i in rng.choice(coasting[::10], dropouts, replace=False):   # apart from each other
        keep[i:i + int(rng.integers(2, 4))] = False          # two or three fixes missing
    if brake_at_s is not None:
        keep[(t_fix > brake_at_s - 1.5) & (t_fix < brake_at_s + 2.5)] = False
    clear = coast & keep & np.roll(keep, 1) & np.roll(keep, -1)   # not beside a gap
    spike = rng.choice(np.flatnonzero(clear))
    v[spike] += 10 * KMH
    t_log = np.round((t_fix + rng.uniform(-jitter_s, jitter_s, t_fix.shape)) * 1000) / 1000
    heading = np.where(sign > 0, 35.0, 215.0)
    return CoastdownLog(source="phone.csv", time_s=t_log[keep], speed_ms=v[keep],
                        line=np.flatnonzero(keep) + 2, heading_deg=heading[keep])


@pytest.mark.parametrize("seed", range(5))
def test_one_hz_whole_kmh_log_keeps_its_runs_and_covers_the_truth(seed):
    # reference: the solve_ivp model above. A few missing fixes and a removed spike
    # must not cost a run; the spike is named; f0 and f2 lie inside the reported
    # 95 % intervals (Student-t), and the fitted wind and slope are the generated
    # 2 m/s and 0.3 % within 4 of their reported standard uncertainties (4 sigma:
    # common practice). Over 50 seeds these intervals covered f0 and f2 in all cases.
    res = analyze_coastdown([phone_log(seed)], mass_kg=MASS, reference="none")
    assert len(res.runs) == 6 and all(r.run.used for r in res.runs), \
        [r.run.reason for r in res.runs]
    assert sum("speed spike removed" in n for r in res.runs for n in r.run.notes) == 1
    lo, hi = res.interval95().T
    assert lo[0] <= TRUTH[0] <= hi[0] and lo[2] <= TRUTH[2] <= hi[2], (res.coefficients, res.std)
    # generated wind +2 m/s against direction A (035 deg), 0.3 % downhill in A
    assert abs(res.fit.wind_ms - 2.0) < 4 * res.fit.wind_std_ms
    slope = -0.003 / np.sqrt(1 + 0.003 ** 2)
    assert abs(res.fit.grade - slope) < 4 * res.fit.grade_std


def test_one_hz_whole_kmh_log_scatter_is_within_the_reported_uncertainty():
    # reference: the solve_ivp model; over 8 seeds the f0 and f2 errors divided by
    # their reported standard uncertainties must have an rms at most 1.2 (a correct
    # or cautious uncertainty gives <= 1; 1.2: common practice for 8 draws) and a
    # mean within ±1 (no bias beyond noise: common practice)
    z = []
    for seed in range(100, 108):
        res = analyze_coastdown([phone_log(seed)], mass_kg=MASS, reference="none")
        z.append((res.coefficients - TRUTH)[[0, 2]] / res.std[[0, 2]])
    z = np.array(z)
    assert np.all(np.sqrt(np.mean(z ** 2, axis=0)) <= 1.2), z
    assert np.all(np.abs(z.mean(axis=0)) <= 1.0), z


def test_brake_touch_hidden_in_a_gap_still_rejects_the_run():
    # a 4 s gap no longer rejects a run by itself, so a brake touch inside it must be
    # caught by the deceleration across the gap: 1.44 m/s lost over about 4 s is
    # 0.35 m/s^2 beyond road load, above the 0.15 m/s^2 brake margin
    t_a = PIECES[8][0]                       # start of the third coast (run 3)
    res = analyze_coastdown([phone_log(7, dropouts=0, brake_at_s=t_a + 40.0)],
                            mass_kg=MASS, reference="none")
    runs = {r.run.run_id: r.run for r in res.runs}
    assert not runs[3].used and runs[3].reason.startswith("brake event"), runs[3].reason
    assert all(runs[k].used for k in (1, 2, 4, 5, 6))


def test_a_longer_dropout_still_rejects_the_run():
    # six or seven fixes missing (a 7-8 s gap) exceeds the default limit max(4.5 s, 2.5 periods)
    log = phone_log(3, dropouts=0)
    t_a = PIECES[2][0] + 50.0               # inside the first coast
    gone = (log.time_s > t_a) & (log.time_s < t_a + 6.5)
    log = CoastdownLog(source="gap.csv", time_s=log.time_s[~gone], speed_ms=log.speed_ms[~gone],
                       line=log.line[~gone], heading_deg=log.heading_deg[~gone])
    res = analyze_coastdown([log], mass_kg=MASS, reference="none")
    run1 = res.runs[0].run
    gap = float(run1.reason.split("no data for ")[1].split(" s")[0])
    assert not run1.used and run1.reason.startswith("dropout") and gap >= 7.0, run1.reason
    assert "longest gap allowed 4.5 s" in run1.reason


def test_phone_log_as_it_comes_gives_the_log_of_the_documented_columns(tmp_path):
    # the same samples with clock times, a 'speed' column in km/h named on the call and a
    # 'bearing' column read as heading: identical to time_s/speed_kmh/heading_deg
    # (1 km/h = 1/3.6 m/s exactly, NIST SP 811); the clock runs over midnight
    from tractive.coastdown import read_coastdown_log

    t = np.arange(30) * 0.5
    v = 100.0 - 2.0 * t
    h = np.full(30, 72.0)
    plain = tmp_path / "plain.csv"
    plain.write_text("time_s,speed_kmh,heading_deg\n" + "".join(
        f"{a:g},{b:g},{c:g}\n" for a, b, c in zip(t, v, h)))
    clock = [f"{int((86390 + a) // 3600) % 24:02d}:{int((86390 + a) % 3600 // 60):02d}:"
             f"{(86390 + a) % 60:04.1f}" for a in t]
    phone = tmp_path / "phone.csv"
    phone.write_text("clock,lat,lon,speed,bearing\n" + "".join(
        f"{c},46.0,7.0,{b:g},{d:g}\n" for c, b, d in zip(clock, v, h)))
    a = read_coastdown_log(plain)
    b = read_coastdown_log(phone, time_column="clock", speed_column="speed", speed_unit="kmh")
    np.testing.assert_allclose(b.time_s, a.time_s, rtol=0, atol=1e-9)
    np.testing.assert_array_equal(b.speed_ms, a.speed_ms)
    np.testing.assert_array_equal(b.heading_deg, a.heading_deg)
    np.testing.assert_array_equal(b.line, a.line)
    with pytest.raises(InputError) as info:
        read_coastdown_log(phone)
    msg = str(info.value)
    assert "columns seen: clock, lat, lon, speed, bearing" in msg and "--time-column" in msg
    with pytest.raises(InputError) as info:
        read_coastdown_log(phone, time_column="clock")
    assert "pass --speed-column speed:kmh" in str(info.value)


def test_plain_and_row_by_row_reading_give_the_same_log(tmp_path):
    # a comment line among the rows sends the file to the row-by-row reader; the numbers
    # and the lines are the same as the C parser's (Python float parsing, both ways)
    from tractive.coastdown import read_coastdown_log

    rows = [f"{i * 0.5!r},{100 - i * 0.731:.3f},{72 + 0.1 * i:.1f},,out\n" for i in range(20)]
    head = "time_s,speed_kmh,heading_deg,air_temperature_c,run\n"
    fast = tmp_path / "fast.csv"
    fast.write_text(head + "".join(rows))
    slow = tmp_path / "slow.csv"
    slow.write_text(head + "".join(rows) + "# end\n")
    a, b = read_coastdown_log(fast), read_coastdown_log(slow)
    for field in ("time_s", "speed_ms", "heading_deg", "air_temperature_c", "line"):
        np.testing.assert_array_equal(getattr(a, field), getattr(b, field))
    assert list(a.run) == list(b.run) == ["out"] * 20
