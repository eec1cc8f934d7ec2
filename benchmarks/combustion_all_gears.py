"""Reference for figure 4 of run.py: the combustion powertrain evaluated in every gear.

This is the body of ``CombustionPowertrain.operation`` as it stood before the
powertrain evaluated only the gear its shift rule picks (source at commit
655b770, ``src/tractive/powertrain/combustion.py``), copied unchanged except
that ``self`` is an argument of a module function. It evaluates the engine in
every gear at every step, builds the whole (gears, vehicles, intervals) state
and then picks one gear, also under the ``speeds`` shift rule. run.py times it
against the current ``CombustionPowertrain.operation`` on the same inputs (those
a study run passes) and checks that both give the same results.
"""

from __future__ import annotations

import numpy as np

from tractive.powertrain._common import STANDSTILL_MS, col
from tractive.powertrain.drive import RPM_RADS


def operation_all_gears(self, force_n, speed_ms, *, accessory_scale=1.0) -> dict:
    """Gear, engine speed and torque, and fuel rate per interval (every gear evaluated)."""
    f, v = np.broadcast_arrays(np.asarray(force_n, float), np.asarray(speed_ms, float))
    # parameters given per vehicle (N,) add a vehicle axis even to a plain demand
    params = [self.gearing.efficiency, self.idle_fuel_kg_s, self.min_pulling_speed_rpm,
              self.accessory_power_w, accessory_scale,
              getattr(self.engine, "marginal_efficiency", None),
              getattr(self.engine, "friction_mep_pa", None),
              getattr(self.engine, "friction_power_w", None)]
    pshape = np.broadcast_shapes(*(np.shape(col(x)) for x in params if x is not None))
    if pshape:
        shape = np.broadcast_shapes(f.shape, pshape)
        f, v = np.broadcast_to(f, shape), np.broadcast_to(v, shape)
    gr = self.gearing
    n_g = gr.n_gears
    gear_axis = (n_g,) + (1,) * f.ndim
    ratios = gr.overall_ratios.reshape(gear_axis)
    first = (np.arange(n_g) == 0).reshape(gear_axis)
    eta = col(gr.efficiency)
    r = gr.tyre_radius_m
    w_gear = v * ratios / r                                    # (G, ...)
    w_idle = self.idle_speed_rpm * RPM_RADS
    w_max = self.rev_limit_rpm * RPM_RADS
    w_pull_min = col(self.pulling_speed_floor_rpm) * RPM_RADS
    p_acc = col(self.accessory_power_w) * col(accessory_scale)
    moving = v > STANDSTILL_MS
    pulling = moving & (f > 0)
    # pulling: first gear slips the clutch below the lowest pulling speed (the engine
    # holds that speed); a higher gear below it lugs (not feasible) and slips only
    # below idle. Not pulling: the clutch opens below idle and the engine idles.
    w_pull = np.where(first, np.maximum(w_gear, w_pull_min), np.maximum(w_gear, w_idle))
    w_over = np.maximum(w_gear, w_idle)
    slip_over = w_gear < w_idle
    w_eng = np.where(pulling, w_pull, w_over)
    t_wheel = f * r / ratios
    t_acc_over = p_acc / w_over
    t_pull = np.maximum(t_wheel, 0.0) / eta + p_acc / w_pull
    t_over = np.minimum(t_wheel, 0.0) * eta + t_acc_over   # motored: wheel power × η
    idle_rate = self.idle_fuel_rate_kg_s(p_acc)
    # overrun in gear: with cut-off, fuel only where the overrun power does not cover
    # friction and accessories (the engine line continued below zero torque, clipped at
    # zero); without cut-off at least the zero-load rate with the accessories
    t_fuel = np.where(pulling, t_pull, t_over if self.fuel_cutoff else t_acc_over)
    fuel_engaged = self.engine.fuel_rate_kg_s(w_eng, t_fuel)
    fuel_g = np.where(~pulling & slip_over, idle_rate, fuel_engaged)
    t_idle = p_acc / w_idle                           # clutch open: accessories only
    t_eng = np.where(pulling, t_pull, np.where(slip_over, t_idle, t_over))
    if self.full_load is not None:
        t_max = self.full_load.max_torque_nm(w_eng)
        torque_ok = ~pulling | (t_pull <= t_max * (1 + 1e-9))
        torque_excess = np.where(pulling, np.maximum(t_pull / np.maximum(t_max, 1e-9) - 1,
                                                     0.0), 0.0)
    else:
        torque_ok = np.ones(w_gear.shape, bool)
        torque_excess = np.zeros(w_gear.shape)
    rev_ok = w_gear <= w_max * (1 + 1e-12)
    # lowest engine speed in gear: the pulling floor while pulling, idle otherwise
    w_floor = np.where(pulling, w_pull_min, w_idle)
    low_ok = first | (w_gear >= w_floor * (1 - 1e-12))
    over_g = ~(rev_ok & torque_ok)
    if self.shift_rule == "speeds":
        g = np.searchsorted(np.asarray(self.upshift_speeds_ms, float), v, side="right")
        g = np.minimum(g, n_g - 1)
        # while pulling, never below the pulling floor: the highest gear that keeps the
        # engine at or above it (first gear slips the clutch when none does)
        n_ok = np.sum(w_gear >= w_pull_min * (1 - 1e-12), axis=0)
        g = np.where(pulling, np.minimum(g, np.maximum(n_ok - 1, 0)), g)
    else:
        feasible = rev_ok & low_ok & torque_ok
        penalty = (np.maximum(w_gear / w_max - 1.0, 0.0)
                   + np.where(first, 0.0, np.maximum(1.0 - w_gear / w_floor, 0.0))
                   + torque_excess)
        # ties (e.g. fuel cut-off in every gear) go to the lowest engine speed
        cost = np.where(feasible, fuel_g, 1.0e6 + penalty) + 1e-15 * w_eng
        g = np.argmin(cost, axis=0)
    g = np.broadcast_to(g, f.shape)

    def pick(a):
        return np.take_along_axis(np.broadcast_to(a, w_gear.shape), g[None], axis=0)[0]

    fuel = pick(fuel_g)
    w_sel = pick(w_eng)
    t_sel = pick(t_eng)
    idle = ~moving | (pick(slip_over) & ~pulling)
    rest_rate = 0.0 if self.engine_off_at_rest else idle_rate
    fuel = np.where(moving, fuel, rest_rate)
    w_sel = np.where(moving, w_sel, 0.0 if self.engine_off_at_rest else w_idle)
    t_sel = np.where(moving, t_sel, 0.0 if self.engine_off_at_rest else t_idle)
    over = moving & pick(over_g)
    gear = np.where(moving, g + 1, 0)
    return {"gear": gear, "engine_speed_rads": w_sel, "engine_torque_nm": t_sel,
            "fuel_kg_s": fuel, "idle": idle, "over_limit": over}
