"""Lines of the check's terminal report for the AC figures (waveform errors, DC readings)."""

from __future__ import annotations


def format_ac_figures(positions: list[dict]) -> list[str]:
    """Per AC position: the reading error on other waveforms and on a DC level (empty without AC positions).

    Parameters
    ----------
    positions : list of dict
        The check's ``positions[]``.

    Returns
    -------
    list of str
    """
    ac = [p for p in positions if "waveform_errors" in p]
    if not ac:
        return []
    names = [w["waveform"] for w in ac[0]["waveform_errors"]]
    lines = ["", "AC positions: reading error at full-scale rms of other waveforms, % of full scale "
             "(average-responding, calibrated in rms of a sine); a DC level equal to the full scale, + and -"]
    head = f"{'position':<12}{'scale':<8}" + "".join(f"{n:>16}" for n in names) + f"{'DC +':>10}{'DC -':>10}"
    lines += [head]
    for p in ac:
        row = "".join(f"{w['error_pct']:>+16.3f}" for w in p["waveform_errors"])
        dc = "".join(f"{d['error_pct']:>+10.2f}" for d in p["dc_readings"])
        lines.append(f"{p['name']:<12}{p.get('scale', 'shared'):<8}{row}{dc}")
    return lines
