"""The terminal table of ``planner check``."""

from __future__ import annotations

from ..ohms_check import ohms_lines
from ..trim import format_trim
from ..model import ZERO_CELSIUS_K
from ..ranges.ac_report import format_ac_figures
from ..units import format_si
from .position import LINEARITY_FRACTIONS


def _fs_text(value: float, unit: str) -> str:
    return format_si(value, unit, 4)


def _pct(x: float, width: int = 8) -> str:
    return f"{x:+{width}.3f}" if x != 0 else f"{0.0:{width}.3f}"


def format_check(result: dict) -> str:
    """A readable terminal report of :func:`check_project`'s result.

    Parameters
    ----------
    result : dict
        What :func:`check_project` returned.

    Returns
    -------
    str
        Per position: full scale, nominal, intrinsic error (worst case) against
        the class index, variation due to temperature per 10 K against its
        permitted variation, verdict, yield, the budget and its margin, and
        input resistance or burden voltage; then the linearity errors at the reference and the hottest
        ambient, the Monte Carlo spread, and the overall verdict.
    """
    t_ref_c = result["reference_temperature_k"] - ZERO_CELSIUS_K
    t_lo_c = result["ambient_min_k"] - ZERO_CELSIUS_K
    t_hi_c = result["ambient_max_k"] - ZERO_CELSIUS_K
    lines = [
        f"{result['title']}: accuracy per position",
        f"class {result['class_index']:g} (% of full scale); reference {t_ref_c:.1f} degC, ambient "
        f"{t_lo_c:.1f} to {t_hi_c:.1f} degC; Monte Carlo {result['samples']} builds, seed {result['seed']}",
        "",
    ]
    head = (f"{'position':<12}{'full scale':>12}{'nominal %':>11}{'intrinsic %':>13}{'temp/10K %':>12}"
            f"{'permitted':>11}{'class %':>9}  {'verdict':<14}{'yield':>7}{'budget %':>10}{'margin':>8}  {'input':<s}")
    lines += [head, "-" * (len(head) + 24)]
    for p in result["positions"]:
        if "ohms_per_volt" in p:
            inp = (f"{format_si(p['input_resistance_ohm'], 'ohm')} "
                   f"({format_si(p['ohms_per_volt'], 'ohm/V')})")
        elif p["measures"] == "resistance":
            inp = (f"centre {format_si(p['center_ohm'], 'ohm')}, open {format_si(p['open_circuit_voltage_v'], 'V')}, "
                   f"short {format_si(p['short_circuit_current_a'], 'A')}")
        else:
            inp = (f"burden {format_si(p['burden_voltage_v'], 'V')} "
                   f"({format_si(p['input_resistance_ohm'], 'ohm')})")
        mark_i = "" if p["intrinsic_within_class"] else "!"
        mark_t = "" if p["temperature_within_limit"] else "!"
        lines.append(
            f"{p['name']:<12}{_fs_text(p['full_scale'], p['unit']):>12}{p['nominal_error_pct']:>+11.3f}"
            f"{p['intrinsic_error_pct']:>12.3f}{mark_i:1}{p['temperature_variation_per_10k_pct']:>11.3f}{mark_t:1}"
            f"{p['temperature_permitted_per_10k_pct']:>11.3f}{p['class_index']:>9g}  {p['verdict']:<14}"
            f"{p['yield_fraction'] * 100:>6.1f}%{p['budget_pct']:>10.3f}{p['budget_margin_pct']:>+8.3f}  {inp}")
    lines.append("")
    lines.append("intrinsic: worst case over the tolerances at the reference temperature, against the class; "
                 "temp/10K: variation due to temperature per 10 K, against the permitted variation "
                 f"({result.get('temperature_share_per_10k', 1.0):g} x class per 10 K, IEC 60051, from memory); "
                 "'!' marks the figure outside its limit. budget = worst case + the whole temperature change "
                 "over the ambient range, a margin only (margin = class - budget).")
    lines.append("")
    lines.append("worst case method: " + "; ".join(
        f"{p['name']} {p['worst_case_method']} ({p['worst_case_corners']} corners, "
        f"{len(p['worst_case_parameters'])} parameters)" for p in result["positions"]))
    if any("loading_error_pct" in p for p in result["positions"]):
        lines.append(f"loading by a {format_si(result['source_impedance_ohm'], 'ohm')} source at full scale: " + "; ".join(
            f"{p['name']} reads {_fs_text(p['loaded_reading'], p['unit'])} ({p['loading_error_pct']:+.3f} %)"
            for p in result["positions"] if "loading_error_pct" in p))

    cols = "".join(f"{int(round(f * 100)):>7d}%" for f in LINEARITY_FRACTIONS)
    for key, title in (("linearity", f"at {t_ref_c:.1f} degC"), ("linearity_hot", "at the hottest ambient")):
        lines += ["", f"linearity error, % of full scale, {title} (columns: % of full scale)",
                  f"{'position':<12}{cols}"]
        for p in result["positions"]:
            if p["measures"] == "resistance":  # marks of an ohms scale: in the ohms lines below
                continue
            row = "".join(f"{r['error_pct']:>+8.3f}" for r in p[key])
            extra = f"  ({p['hot_temperature_k'] - ZERO_CELSIUS_K:.1f} degC)" if key == "linearity_hot" else ""
            lines.append(f"{p['name']:<12}{row}{extra}")

    lines += ["", "Monte Carlo, full-scale error % (mean, std, 1st-99th percentile) and worst error over the scale %:"]
    for p in result["positions"]:
        s = p["monte_carlo"]["full_scale_error_pct"]
        w = p["monte_carlo"]["worst_linearity_error_pct"]
        lines.append(f"{p['name']:<12}{s['mean']:+.3f} +/- {s['std']:.3f}  [{s['p1']:+.3f}, {s['p99']:+.3f}]   "
                     f"worst over scale: median {w['p50']:.3f}, 99th pct {w['p99']:.3f}")
    lines += ohms_lines(result)
    lines.append(f"builds with every position within class: {result['instrument_yield_fraction'] * 100:.1f} %")
    lines += format_ac_figures(result["positions"])
    lines += format_trim(result)  # analysis.trim: the worst case after trimming and the calibration steps
    lines += ["", f"budget rule: {result['budget_rule']}"]
    if result["requirements_met"]:
        lines.append("RESULT: requirement met - every position within class")
    else:
        lines.append("RESULT: requirement NOT met - outside class: " + ", ".join(result["positions_outside_class"]))
    return "\n".join(lines) + "\n"
