"""Finding coasting runs in raw logs, with the reason for every rejection.

Steps, per log:

1. **Missing samples** (empty speed cells) are dropped.
2. **Speed spikes** are removed sample by sample: a sample further from the
   running median of its neighbours (about 1 s, at least 5 samples) than
   ``max(spike_floor_kmh, 6 σ)`` is a spike, σ being the speed noise estimated
   robustly from second differences (median absolute deviation, scaled to a
   Gaussian σ). During coasting the speed is monotonic, so the running median
   of clean data is the sample itself plus noise.
3. **Coasting segments**: the speed is put on a uniform grid and its
   derivative taken with a Savitzky-Golay filter over ``detect_window_s``;
   a segment is a stretch where the vehicle decelerates by more than
   ``decel_min_ms2`` (holes shorter than 1 s closed; two stretches that only
   noise separates, a hole no longer than the detection window across which
   the speed does not rise by more than 2 σ, are one, with a note). Acceleration ends a
   segment; so does a change of the ``run`` or ``direction`` label. Half the
   detection window plus 1 s is dropped at each end of a segment, where the
   filter blurs the change from driving to coasting.
4. **Speed window**: only the part of a segment between the window's speeds
   (smoothed speed) is kept.
5. **Brake events**: deceleration on a short window (``brake_window_s``) is
   compared with a robust quadratic fit of deceleration against speed over
   all segments of all logs (iteratively trimmed at 3 σ). Deceleration that
   exceeds it by more than ``max(brake_margin_ms2, 6 σ)`` cannot come from
   road load: at the start or end of a segment (braking into or out of a run)
   it is cut off; inside a run it rejects the run.
6. **Dropouts**: a gap between samples longer than ``max_gap_s`` rejects the
   run.
7. **Span**: a run must cover at least ``min_span_kmh`` inside the window.

Directions come from a ``direction`` label or from the heading (runs within
90° of the first run's mean heading are direction A, the others B).

References
----------
.. [1] SAE J2263, Road Load Measurement Using Onboard Anemometry and Coastdown
   Techniques (coasting in neutral over a speed range, runs in both
   directions, paired and averaged).
.. [2] Savitzky and Golay, Analytical Chemistry 36 (1964) 1627-1639.
.. [3] Rousseeuw, P. J. and Croux, C., "Alternatives to the Median Absolute
   Deviation", J. Am. Stat. Assoc. 88 (1993) 1273-1283 (MAD × 1.4826 as a
   Gaussian σ).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from .._lazy import lazy_function

from ..errors import InputError
from ..limits import MAX_TEST_SPEED_KMH

# scipy is loaded when runs are found, not when the settings are imported for --help
median_filter = lazy_function("scipy.ndimage", "median_filter")
savgol_filter = lazy_function("scipy.signal", "savgol_filter")
from ..units import KMH_MS, STANDARD_GRAVITY_MS2
from .logs import CoastdownLog
from .motion import odd_window

#: longest gap [s] a user may allow inside a run (a longer one is no coasting record)
MAX_GAP_LIMIT_S = 60.0
#: highest speed [km/h] of the speed window
MAX_WINDOW_SPEED_KMH = MAX_TEST_SPEED_KMH
#: Gaussian σ per median absolute deviation (Rousseeuw and Croux 1993)
MAD_TO_SIGMA = 1.482602218505602


@dataclass(frozen=True)
class DetectionSettings:
    """Thresholds of run detection (units in the names).

    Attributes
    ----------
    speed_window_kmh : (float, float)
        Speeds [km/h] between which data are fitted. Default 15-115 km/h, the
        SAE J2263 coasting range.
    min_span_kmh : float
        Least speed drop [km/h] a run must cover inside the window.
    max_gap_s : float or None
        Longest gap between samples [s] a run may contain; None means
        max(4.5 s, 2.5 sample periods): a 1 Hz phone log that misses up to
        three fixes (a 4 s gap, plus timing jitter) keeps its run (the
        speed-time fit needs no uniform sampling, and a brake touch hidden in
        such a gap still shows as excess deceleration across it).
    decel_min_ms2 : float
        Deceleration [m/s²] above which the vehicle counts as slowing down.
    detect_window_s : float
        Savitzky-Golay window [s] for finding segments.
    brake_window_s : float
        Savitzky-Golay window [s] for finding brake events.
    brake_margin_ms2 : float
        Least excess deceleration [m/s²] over the coasting curve that counts
        as braking.
    spike_floor_kmh : float
        Least departure [km/h] from the running median that counts as a spike.
    """

    speed_window_kmh: tuple = (15.0, 115.0)
    min_span_kmh: float = 20.0
    max_gap_s: float | None = None
    decel_min_ms2: float = 0.02
    detect_window_s: float = 4.0
    brake_window_s: float = 1.5
    brake_margin_ms2: float = 0.15
    spike_floor_kmh: float = 1.0

    def __post_init__(self):
        lo, hi = (float(x) for x in self.speed_window_kmh)
        if not (0.0 <= lo < hi <= MAX_WINDOW_SPEED_KMH):
            raise InputError(f"needs 0 ≤ low < high ≤ {MAX_WINDOW_SPEED_KMH:g} km/h, got "
                             f"{lo:g}-{hi:g}", field="speed_window_kmh")
        object.__setattr__(self, "speed_window_kmh", (lo, hi))
        span = float(self.min_span_kmh)
        if not (0.0 < span < hi - lo + 1e-9):
            raise InputError(f"must be positive and fit in the speed window, got {span:g}",
                             field="min_span_kmh")
        gap = self.max_gap_s
        if gap is not None and not (0.0 < gap <= MAX_GAP_LIMIT_S):
            raise InputError(f"must be above 0 and at most {MAX_GAP_LIMIT_S:g} s, got "
                             f"{gap:g}", field="max_gap_s")


@dataclass(frozen=True)
class Run:
    """A coasting run found in a log.

    Attributes
    ----------
    run_id : int
        1-based number across all logs, in log order then time order.
    log_index : int
        Which log (0-based) the run is in.
    source : str
        The log file.
    samples : int array
        Indices into the log's arrays of the samples used (spikes and missing
        samples excluded).
    start_s, end_s : float
        Time span in the log [s].
    speed_start_kmh, speed_end_kmh : float
        Smoothed speed at start and end [km/h].
    used : bool
        Whether the run goes into the fit.
    reason : str
        Why it is not used ("" when used), or why it was kept despite a problem.
    notes : tuple of str
        Things removed or cut off (spikes, braking at the ends).
    label : str or None
        ``direction`` label of its samples, if the log has one.
    heading_deg : float or None
        Circular mean heading [°], if the log has headings.
    group : str or None
        ``"A"`` or ``"B"`` (opposite directions), None when unknown.
    direction : str
        Label or heading text shown to the user.
    pair : int or None
        Pair number when opposite runs are paired.
    """

    run_id: int
    log_index: int
    source: str
    samples: np.ndarray
    start_s: float
    end_s: float
    speed_start_kmh: float
    speed_end_kmh: float
    used: bool = True
    reason: str = ""
    notes: tuple = ()
    label: str | None = None
    heading_deg: float | None = None
    group: str | None = None
    direction: str = "?"
    pair: int | None = None
    problem: str = ""  # machine-readable kind of the rejection

    @property
    def span_kmh(self) -> float:
        return self.speed_start_kmh - self.speed_end_kmh


@dataclass(frozen=True)
class LogScan:
    """What detection saw in one log (for the report)."""

    source: str
    samples: int
    missing_samples: int
    spikes_removed: int
    sample_period_s: float
    speed_noise_kmh: float
    max_speed_kmh: float
    candidate_segments: int

    def to_dict(self) -> dict:
        return {"log": self.source, "samples": self.samples,
                "missing_samples": self.missing_samples,
                "spikes_removed": self.spikes_removed,
                "sample_period_s": self.sample_period_s,
                "speed_noise_kmh": self.speed_noise_kmh, "max_speed_kmh": self.max_speed_kmh,
                "candidate_segments": self.candidate_segments}


@dataclass
class _Segment:
    log_index: int
    t_start: float
    t_end: float
    grid_t: np.ndarray
    grid_v: np.ndarray          # smoothed speed on the grid
    grid_a: np.ndarray          # brake-window deceleration on the grid
    after_accel_s: float | None
    notes: list = field(default_factory=list)   # about the segment itself (joins)


def _spike_mask(v, dt0, floor_ms):
    """Boolean mask of speed spikes and the robust speed noise σ [m/s]."""
    n = len(v)
    if n < 5:
        return np.zeros(n, bool), 0.0
    size = max(5, odd_window(1.0, dt0, 1))
    med = median_filter(v, size=size, mode="nearest")
    d2 = v[2:] - 2.0 * v[1:-1] + v[:-2]
    sigma = MAD_TO_SIGMA * np.median(np.abs(d2 - np.median(d2))) / np.sqrt(6.0)
    thr = max(floor_ms, 6.0 * sigma)
    return np.abs(v - med) > thr, float(sigma)


def _true_runs(mask):
    """(start, stop) index pairs of the True stretches of a boolean array."""
    m = np.concatenate([[False], mask, [False]]).astype(np.int8)
    d = np.diff(m)
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def _close_holes(mask, max_hole):
    out = mask.copy()
    holes = _true_runs(~mask)
    for a, b in holes:
        if a > 0 and b < len(mask) and b - a <= max_hole:
            out[a:b] = True
    return out


def _join_noise_holes(stretches, vs, tg, sigma_ms, det_n, changes):
    """Join coasting stretches that only noise separates; yields (start, stop, notes).

    With noisy speeds (a 1 Hz phone log) the smoothed deceleration of a coast
    at low speed (about 0.1 m/s²) can dip above the threshold for a moment and
    split one coast into two pieces. Two stretches are one coast when the hole
    between them is no longer than the detection window, no ``run`` or
    ``direction`` label changes in it, and the smoothed speed does not rise
    across it by more than twice the speed noise σ (a throttle that ends a
    coast raises the speed for longer and by more). The joined run carries a
    note saying so; the brake check and the fit then judge the whole.
    """
    out = []
    for a, b in stretches:
        if out:
            a0, b0, notes = out[-1]
            hole = a - b0
            rise = float(vs[a] - vs[b0 - 1])
            label_change = bool(np.any((changes >= b0 - 1) & (changes <= a)))
            if hole <= det_n and not label_change and rise <= 2.0 * sigma_ms:
                notes = notes + [f"one coast joined across {tg[a] - tg[b0 - 1]:.0f} s at "
                                 f"{tg[b0 - 1]:.0f} s where speed noise hid the deceleration "
                                 f"(speed change {rise / KMH_MS:+.1f} km/h, noise "
                                 f"{sigma_ms / KMH_MS:.1f} km/h)"]
                out[-1] = (a0, b, notes)
                continue
        out.append((a, b, []))
    return out


def _labels_on_grid(labels, t, tg):
    idx = np.clip(np.searchsorted(t, tg), 0, len(t) - 1)
    return labels[idx]


def find_runs(logs, settings: DetectionSettings):
    """Find coasting runs in each log.

    Parameters
    ----------
    logs : sequence of CoastdownLog
    settings : DetectionSettings

    Returns
    -------
    (runs, scans)
        ``runs`` a list of :class:`Run` (used or rejected, with reasons),
        ``scans`` a list of :class:`LogScan`.
    """
    lo_kmh, hi_kmh = settings.speed_window_kmh
    lo, hi = lo_kmh * KMH_MS, hi_kmh * KMH_MS
    segments, scans, cleaned = [], [], []
    for li, log in enumerate(logs):
        valid = np.flatnonzero(np.isfinite(log.speed_ms))
        t_all, v_all = log.time_s[valid], log.speed_ms[valid]
        dt0 = float(np.median(np.diff(t_all))) if len(t_all) > 1 else 1.0
        spikes, sigma = _spike_mask(v_all, dt0, settings.spike_floor_kmh * KMH_MS)
        keep = valid[~spikes]
        cleaned.append((keep, valid[spikes], v_all[spikes] - median_filter(
            v_all, size=max(5, odd_window(1.0, dt0, 1)), mode="nearest")[spikes]))
        t, v = log.time_s[keep], log.speed_ms[keep]
        n_seg = 0
        det_n = odd_window(settings.detect_window_s, dt0, 2)
        if len(t) > 1:
            tg = np.arange(t[0], t[-1] + 1e-9 * dt0, dt0)
        else:
            tg = t
        if len(tg) >= det_n:
            vg = np.interp(tg, t, v)
            vs = savgol_filter(vg, det_n, 2, mode="interp")
            a_det = savgol_filter(vg, det_n, 2, deriv=1, delta=dt0, mode="interp")
            br_n = odd_window(settings.brake_window_s, dt0, 1, n_max=len(tg))
            a_brake = savgol_filter(vg, br_n, 1, deriv=1, delta=dt0, mode="interp")
            mask = (a_det < -settings.decel_min_ms2) & (vs > 1.0)
            mask = _close_holes(mask, int(round(1.0 / dt0)))
            changes = []
            for labels in (log.run, log.direction):
                if labels is not None:
                    lg = _labels_on_grid(labels, t, tg)
                    change = np.flatnonzero(lg[1:] != lg[:-1]) + 1
                    mask[change] = False
                    changes.append(change)
            changes = np.concatenate(changes) if changes else np.array([], int)
            for a, b, joined in _join_noise_holes(_true_runs(mask), vs, tg, sigma, det_n,
                                                  changes):
                if (tg[b - 1] - tg[a]) < 3.0 or (vs[a] - vs[b - 1]) < 5.0 * KMH_MS:
                    continue
                # the detection derivative blurs the segment ends by half its window:
                # drop that and 1 s more where the coast itself begins or ends (the
                # shift into neutral, the first touch of the throttle)
                trim = det_n // 2 + int(np.ceil(1.0 / dt0))
                sub = np.arange(a + trim, b - trim)
                # restrict to the speed window
                inside = sub[(vs[sub] <= hi) & (vs[sub] >= lo)]
                if inside.size == 0 or vs[inside[0]] - vs[inside[-1]] < 5.0 * KMH_MS:
                    continue
                g0, g1 = inside[0], inside[-1] + 1
                after = None
                if b < len(tg):
                    acc = np.flatnonzero(a_det[b:] > settings.decel_min_ms2)
                    if acc.size and tg[b + acc[0]] - tg[b - 1] < 2.0 * settings.detect_window_s:
                        after = float(tg[b + acc[0]])
                segments.append(_Segment(li, float(tg[g0]), float(tg[g1 - 1]), tg[g0:g1],
                                         vs[g0:g1], a_brake[g0:g1], after, joined))
                n_seg += 1
        vmax = float(np.max(v)) / KMH_MS if len(v) else 0.0
        scans.append(LogScan(log.source, log.n, int(log.n - len(valid)), int(spikes.sum()),
                             dt0, sigma / KMH_MS, vmax, n_seg))
    if not segments:
        raise InputError(_no_runs_message(logs, scans, settings),
                         file=logs[0].source if len(logs) == 1 else None)
    ref, thr = _coasting_reference(segments, settings)
    runs = []
    for seg in segments:
        runs.append(_judge(seg, len(runs) + 1, logs[seg.log_index], cleaned[seg.log_index],
                           ref, thr, scans[seg.log_index], settings))
    return runs, scans


def _no_runs_message(logs, scans, settings):
    lo, hi = settings.speed_window_kmh
    vmax = max(s.max_speed_kmh for s in scans)
    names = ", ".join(s.source for s in scans)
    if vmax < lo + 5.0:
        return (f"no coasting run found in {names}: the speed never exceeds {vmax:.1f} km/h "
                f"(stationary or too slow for the {lo:g}-{hi:g} km/h window)")
    return (f"no coasting run found in {names}: no stretch of sustained deceleration of at "
            f"least 5 km/h inside the {lo:g}-{hi:g} km/h window")


def _coasting_reference(segments, settings):
    """Robust quadratic fit of deceleration [m/s²] against speed over all segments."""
    v = np.concatenate([s.grid_v for s in segments])
    a = np.concatenate([s.grid_a for s in segments])
    x = np.column_stack([np.ones_like(v), v, v * v])
    keep = np.ones(len(v), bool)
    coef = np.zeros(3)
    sigma = 0.0
    for _ in range(8):
        if keep.sum() < 3:
            break
        coef = np.linalg.lstsq(x[keep], a[keep], rcond=None)[0]
        r = a - x @ coef
        sigma = MAD_TO_SIGMA * np.median(np.abs(r[keep] - np.median(r[keep])))
        new = np.abs(r) <= 3.0 * max(sigma, 1e-6)
        if np.array_equal(new, keep):
            break
        keep = new
    thr = max(settings.brake_margin_ms2, 6.0 * sigma)
    return coef, thr


def _judge(seg, run_id, log, clean, ref, thr, scan, s: DetectionSettings) -> Run:
    keep, spike_idx, spike_dev = clean
    notes = list(seg.notes)
    t0, t1 = seg.t_start, seg.t_end
    dt0 = scan.sample_period_s
    ref_a = ref[0] + ref[1] * seg.grid_v + ref[2] * seg.grid_v ** 2
    excess = ref_a - seg.grid_a        # > 0: slowing faster than road load can explain
    brake = excess > thr
    margin = 0.5 * s.brake_window_s + dt0
    reason, problem = "", ""
    events = _true_runs(_close_holes(brake, int(round(s.brake_window_s / dt0)))) \
        if brake.any() else []
    for a, b in events:
        ta, tb = seg.grid_t[a], seg.grid_t[b - 1]
        peak = a + int(np.argmax(excess[a:b]))
        if ta - t0 <= margin:
            notes.append(f"braking at the start cut off ({t0:.1f}-{tb:.1f} s)")
            t0 = max(t0, tb + margin)
        elif t1 - tb <= margin:
            notes.append(f"braking at the end cut off ({ta:.1f}-{t1:.1f} s)")
            t1 = min(t1, ta - margin)
        elif not reason:
            reason = (f"brake event at {ta:.1f}-{tb:.1f} s: deceleration "
                      f"{-seg.grid_a[peak]:.2f} m/s² where coasting gives "
                      f"{-ref_a[peak]:.2f} m/s² at {seg.grid_v[peak] / KMH_MS:.0f} km/h")
            problem = "brake"
    t = log.time_s[keep]
    sel = keep[(t >= t0 - 1e-9) & (t <= t1 + 1e-9)]
    gv = np.interp([t0, t1], seg.grid_t, seg.grid_v) / KMH_MS if t1 > t0 else \
        np.array([0.0, 0.0])
    inside = (log.time_s[spike_idx] >= t0) & (log.time_s[spike_idx] <= t1)
    for i, dev in zip(spike_idx[inside], spike_dev[inside]):
        where = f"line {log.line[i]}, " if log.line[i] else ""
        notes.append(f"speed spike removed at {log.time_s[i]:.1f} s ({where}"
                     f"{dev / KMH_MS:+.1f} km/h off its neighbours)")
    if not reason and len(sel) > 1:
        gaps = np.diff(log.time_s[sel])
        max_gap = s.max_gap_s if s.max_gap_s is not None else max(4.5, 2.5 * dt0)
        big = np.flatnonzero(gaps > max_gap)
        if big.size:
            i = big[0]
            reason = (f"dropout: no data for {gaps[i]:.1f} s at {log.time_s[sel[i]]:.1f} s "
                      f"(longest gap allowed {max_gap:.3g} s)")
            problem = "dropout"
    span = gv[0] - gv[1]
    if not reason and (span < s.min_span_kmh or len(sel) < 10):
        reason = (f"covers only {max(span, 0.0):.1f} km/h of the {s.speed_window_kmh[0]:g}-"
                  f"{s.speed_window_kmh[1]:g} km/h window (minimum {s.min_span_kmh:g})")
        if seg.after_accel_s is not None:
            reason += f"; ended by acceleration at {seg.after_accel_s:.1f} s"
        problem = "short"
    label = None
    if log.direction is not None and len(sel):
        vals, counts = np.unique(log.direction[sel].astype(str), return_counts=True)
        ok = vals != ""
        if ok.any():
            label = str(vals[ok][np.argmax(counts[ok])])
    heading = None
    if log.heading_deg is not None and len(sel):
        h = log.heading_deg[sel]
        h = h[np.isfinite(h)]
        if h.size:
            rad = np.radians(h)
            heading = float(np.degrees(np.arctan2(np.sin(rad).mean(), np.cos(rad).mean()))
                            % 360.0)
    return Run(run_id=run_id, log_index=seg.log_index, source=log.source, samples=sel,
               start_s=float(t0), end_s=float(t1), speed_start_kmh=float(gv[0]),
               speed_end_kmh=float(gv[1]), used=not reason, reason=reason,
               notes=tuple(notes), label=label, heading_deg=heading, problem=problem)


def apply_user_choice(runs, keep=None, drop=None):
    """Apply the user's ``keep`` and ``drop`` run numbers (errors for unknown numbers)."""
    keep = set(keep or ())
    drop = set(drop or ())
    ids = {r.run_id for r in runs}
    for name, chosen in (("keep", keep), ("drop", drop)):
        unknown = sorted(chosen - ids)
        if unknown:
            raise InputError(f"no run {unknown[0]}; runs are numbered 1 to {max(ids)}",
                             field=name)
    both = sorted(keep & drop)
    if both:
        raise InputError(f"run {both[0]} is both kept and dropped", field="keep")
    out = []
    for r in runs:
        if r.run_id in drop:
            r = replace(r, used=False, reason="dropped by the user", problem="user")
        elif r.run_id in keep and not r.used:
            if len(r.samples) < 10:
                raise InputError(f"run {r.run_id} has too few samples to fit ({len(r.samples)})",
                                 field="keep")
            r = replace(r, used=True, reason=f"kept by the user despite: {r.reason}")
        out.append(r)
    return out


def assign_directions(runs):
    """Group runs into two opposite directions A and B (labels or headings).

    Returns the runs with ``group`` and ``direction`` set, plus notes.
    """
    notes = []
    used = [r for r in runs if r.used] or list(runs)
    if all(r.label is not None for r in used):
        labels = []
        for r in used:
            if r.label not in labels:
                labels.append(r.label)
        if len(labels) > 2:
            raise InputError(f"direction labels: found {len(labels)} ({', '.join(labels[:4])}); "
                             "a coast-down uses two opposite directions", field="direction")
        groups = {lab: g for lab, g in zip(labels, "AB")}
        out = []
        for r in runs:
            g = groups.get(r.label) if r.label is not None else None
            out.append(replace(r, group=g, direction=r.label if r.label is not None else "?"))
        return out, notes
    if all(r.heading_deg is not None for r in used):
        ref = used[0].heading_deg
        out = []
        for r in runs:
            if r.heading_deg is None:
                out.append(replace(r, group=None, direction="?"))
                continue
            diff = (r.heading_deg - ref + 180.0) % 360.0 - 180.0
            out.append(replace(r, group="A" if abs(diff) < 90.0 else "B",
                               direction=f"{round(r.heading_deg) % 360:03d}°"))
        means = {}
        for g in "AB":
            hs = [r.heading_deg for r in out if r.used and r.group == g]
            if hs:
                rad = np.radians(hs)
                means[g] = np.degrees(np.arctan2(np.sin(rad).mean(), np.cos(rad).mean()))
        if len(means) == 2:
            sep = abs((means["A"] - means["B"] + 180.0) % 360.0 - 180.0)
            if sep < 150.0:
                notes.append(f"the two directions differ by {sep:.0f}° (not opposite); "
                             "check that all runs are on the same straight")
        return out, notes
    return [replace(r, group=None, direction="?") for r in runs], notes


def pair_runs(runs):
    """Pair each run with the earliest unpaired run of the opposite direction."""
    out = list(runs)
    open_runs = []
    pair_no = 0
    for i, r in enumerate(out):
        if not r.used or r.group is None:
            continue
        match = next((j for j in open_runs if out[j].group != r.group), None)
        if match is None:
            open_runs.append(i)
            continue
        open_runs.remove(match)
        pair_no += 1
        out[match] = replace(out[match], pair=pair_no)
        out[i] = replace(r, pair=pair_no)
    return out


def run_grade(log: CoastdownLog, samples):
    """Mean grade [-] of a run from its elevations: slope of a straight line fitted
    to elevation against distance travelled (distance from the speed, trapezoidal).

    Returns None when the log has no usable elevations.
    """
    if log.elevation_m is None:
        return None
    t = log.time_s[samples]
    v = log.speed_ms[samples]
    z = log.elevation_m[samples]
    dist = np.concatenate([[0.0], np.cumsum(0.5 * (v[1:] + v[:-1]) * np.diff(t))])
    ok = np.isfinite(z)
    if ok.sum() < 10 or np.ptp(dist[ok]) <= 0:
        return None
    slope = np.polyfit(dist[ok], z[ok], 1)[0]
    return float(slope)


def grade_force_n(mass_kg, grade):
    """Grade force [N] = m·g·sin(atan(grade)), positive uphill."""
    return mass_kg * STANDARD_GRAVITY_MS2 * grade / np.sqrt(1.0 + grade * grade)
