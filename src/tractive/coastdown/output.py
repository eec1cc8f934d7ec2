"""Outputs of a coast-down analysis: the road-load YAML block and a figure.

The YAML block holds exactly the keys a vehicle file's ``road_load:``
accepts (``f0_n``, ``f1_n_per_kmh``, ``f2_n_per_kmh2``, ``covariance``); the
rest of the result (method, runs, corrections) is written as comments above
it. A vehicle file can include it with ``road_load: {from_coastdown: FILE}``
or have it pasted under ``road_load:``.

The output file's ending chooses the format: ``.yaml`` or ``.yml`` for that
block, ``.json`` for the whole result as JSON (the document ``--json``
prints; ``from_coastdown`` reads its ``road_load`` entry). Figures are
``.png``, ``.pdf`` or ``.svg``. Any other ending is refused, as is a missing
folder. Files are written atomically and never over an input; a result that
is not finite is never written.
"""

from __future__ import annotations

from typing import Iterable

import numpy as np

from ..errors import InputError
from ..plain import json_text
from ..report.common import atomic_write, check_target, write_text_atomic
from ..units import KMH_MS

#: endings of the road-load file: YAML block, or the whole result as JSON
ROAD_LOAD_SUFFIXES = (".yaml", ".yml", ".json")
#: endings of the figure (formats matplotlib writes with its Agg backend)
PLOT_SUFFIXES = (".png", ".pdf", ".svg")


def _num(x: float) -> str:
    """A float as YAML text that YAML 1.1 readers also take as a number.

    ``repr`` writes ``1e-05`` for some values; YAML 1.1 (PyYAML) needs a dot in
    the mantissa (``1.0e-05``) to read it as a float.
    """
    text = repr(float(x))
    if "e" in text and "." not in text.split("e")[0]:
        mant, exp = text.split("e")
        text = f"{mant}.0e{exp}"
    return text


def _require_finite(result, path) -> None:
    block = result.road_load_block()
    values = [block["f0_n"], block["f1_n_per_kmh"], block["f2_n_per_kmh2"]]
    values += [x for row in block["covariance"] for x in row]
    if not np.all(np.isfinite(values)):
        raise InputError("not written: the fit gave no finite road load (check the runs "
                         "and options)", file=str(path))


def road_load_yaml(result, *, inputs: Iterable = ()) -> str:
    """The road-load block of a :class:`~tractive.coastdown.CoastdownResult` as YAML text."""
    block = result.road_load_block()
    std = result.std
    corr = result.corrections
    used = [r for r in result.runs if r.run.used]
    lines = [
        "# Road load from a coast-down analysis (tractive coastdown).",
        "# Use it in a vehicle file as   road_load: {from_coastdown: THIS_FILE}",
        "# or paste the keys under road_load: below into a vehicle's road_load:.",
        f"# logs: {', '.join(str(x) for x in inputs) or '-'}",
        f"# method {result.method}, combine {result.combine}, {result.terms} terms, "
        f"speed window {result.speed_window_kmh[0]:g}-{result.speed_window_kmh[1]:g} km/h, "
        f"{len(used)} runs used",
        f"# test mass {result.mass_kg:g} kg, inertial mass {result.inertial_mass_kg:g} kg",
        f"# standard uncertainties: f0 {std[0]:.3g} N, f1 {std[1]:.3g} N/(km/h), "
        f"f2 {std[2]:.3g} N/(km/h)^2",
    ]
    if corr.get("standard"):
        lines.append(f"# corrected to reference conditions of {corr['standard']}: "
                     f"{corr.get('basis', '')}")
    else:
        lines.append("# not corrected: coefficients at test conditions")
    for text in corr.get("not_applied", []):
        lines.append(f"# note: {text}")
    lines += ["# test mass and rotating-mass fraction of the coast-down: from_coastdown scales",
              "# f0 and f1 to another vehicle mass (rolling resistance ~ mass) and warns when",
              "# the vehicle's rotating-mass fraction differs",
              f"test_mass_kg: {_num(result.mass_kg)}",
              f"test_rotating_mass_fraction: {_num(result.rotating_mass_fraction)}",
              "# the road load: paste the keys below under a vehicle's road_load: if you like",
              "road_load:",
              "  # covariance of (f0, f1, f2) in N^2, N^2/(km/h), N^2/(km/h)^2 ...",
              f"  f0_n: {_num(block['f0_n'])}",
              f"  f1_n_per_kmh: {_num(block['f1_n_per_kmh'])}",
              f"  f2_n_per_kmh2: {_num(block['f2_n_per_kmh2'])}"]
    if "reference_air_density_kg_m3" in block:
        lines += ["  # air density at which f2 holds (a study rescales f2 to its ambient air)",
                  "  reference_air_density_kg_m3: "
                  f"{_num(block['reference_air_density_kg_m3'])}"]
    lines += ["  covariance:"]
    for row in block["covariance"]:
        lines.append("    - [" + ", ".join(_num(x) for x in row) + "]")
    return "\n".join(lines) + "\n"


def write_road_load_yaml(result, path, *, inputs: Iterable = ()):
    """Write the road-load block atomically; refuses to overwrite an input file."""
    inputs = [str(x) for x in inputs]
    check_target(path, inputs, suffixes=(".yaml", ".yml"))
    _require_finite(result, path)
    return write_text_atomic(path, road_load_yaml(result, inputs=inputs), inputs=inputs)


def write_road_load(result, path, *, inputs: Iterable = ()):
    """Write the result by the file's ending: ``.yaml``/``.yml`` the road-load block
    (:func:`road_load_yaml`), ``.json`` the whole result (``result.to_dict()``).

    Raises
    ------
    InputError
        Another ending, a missing or unwritable folder, an input file as target,
        or a result that is not finite.
    """
    inputs = [str(x) for x in inputs]
    target = check_target(path, inputs, suffixes=ROAD_LOAD_SUFFIXES)
    if target.suffix.lower() != ".json":
        return write_road_load_yaml(result, path, inputs=inputs)
    _require_finite(result, path)
    text = json_text(result.to_dict()) + "\n"
    return write_text_atomic(path, text, inputs=inputs)


def plot_coastdown(result, path, *, inputs: Iterable = ()):
    """Figure: measured and fitted speed against time, deceleration against speed,
    and the speed residuals.

    Written atomically with matplotlib's Agg backend in the format of the file
    ending: ``.png``, ``.pdf`` or ``.svg`` (others are refused).
    """
    inputs = [str(x) for x in inputs]
    target = check_target(path, inputs, suffixes=PLOT_SUFFIXES)
    _require_finite(result, path)
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fit = result.fit
    fig = plt.figure(figsize=(12, 7.2))
    grid = fig.add_gridspec(3, 2, height_ratios=[1.0, 1.0, 0.8])
    ax1 = fig.add_subplot(grid[0:2, 0])
    ax2 = fig.add_subplot(grid[0:2, 1])
    ax3 = fig.add_subplot(grid[2, :])
    colors = {1.0: "tab:blue", -1.0: "tab:orange", 0.0: "tab:green"}
    m = result.inertial_mass_kg
    directions = {r.run.run_id: r.run.direction for r in result.runs}
    for s in fit.series:
        col = colors.get(float(s.sign), "tab:green")
        ax1.plot(s.time_s, s.speed_ms / KMH_MS, ".", ms=2, color=col, alpha=0.4)
        ax1.plot(s.time_s, s.speed_fit_ms / KMH_MS, "-", lw=1, color="k")
        ax2.plot(s.decel_speed_ms / KMH_MS, s.decel_ms2, ".", ms=2, color=col, alpha=0.3)
        ax3.plot(s.time_s, (s.speed_ms - s.speed_fit_ms) / KMH_MS, ".", ms=1.5, color=col,
                 alpha=0.5)
    seen = set()
    for s in fit.series:
        key = (float(s.sign), round(s.headwind_ms, 3))
        if key in seen:
            continue
        seen.add(key)
        a, b, c = s.apparent_coef
        vv = np.linspace(result.speed_window_kmh[0], result.speed_window_kmh[1], 100) * KMH_MS
        force = a + b * vv + c * (vv + s.headwind_ms) ** 2
        ax2.plot(vv / KMH_MS, force / m, "-", lw=1.5, color=colors.get(float(s.sign), "k"),
                 label=f"fit, direction {directions.get(s.run_id, '?')}")
    ax1.set_xlabel("time since run start [s]")
    ax1.set_ylabel("speed [km/h]")
    ax1.set_title("measured (dots) and fitted (lines) speed")
    ax2.set_xlabel("speed [km/h]")
    ax2.set_ylabel("deceleration [m/s²]")
    ax2.set_title("deceleration (smoothed derivative) and fitted road load / mass")
    ax2.legend(fontsize=8)
    ax3.axhline(0.0, color="k", lw=0.8)
    ax3.set_xlabel("time since run start [s]")
    ax3.set_ylabel("measured − fitted [km/h]")
    ax3.set_title("speed residuals of the used runs", fontsize=10)
    fig.suptitle(f"f0 {result.f0_n:.1f} N, f1 {result.f1_n_per_kmh:.4f} N/(km/h), "
                 f"f2 {result.f2_n_per_kmh2:.5f} N/(km/h)²  ({result.method}, "
                 f"{result.combine})", fontsize=10)
    fig.tight_layout()
    suffix = target.suffix.lower().lstrip(".")

    def _write(tmp):
        fig.savefig(tmp, format=suffix, dpi=120)

    try:
        return atomic_write(path, _write, inputs=inputs)
    finally:
        plt.close(fig)
