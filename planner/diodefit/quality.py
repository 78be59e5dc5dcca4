"""The quality gate of a diode fit: when the points do not follow the diode law.

A least-squares fit always ends somewhere. When the points are not a diode's
(columns swapped, a unit off by 1000 on some rows, two parts mixed in one file,
readings typed in the wrong order), it ends with a parameter pinned to its
search bound and a scatter of hundreds or thousands of percent, and a model
that looks pasteable but means nothing. This gate names those cases; a fit that
fails it has no YAML block and ``planner fit-diode`` exits 1.
"""

from __future__ import annotations

import math

#: Largest rms residual (ln of current) of a usable fit: 0.25, a scatter of about
#: 28 % of current. A bench measurement with a 3 1/2 digit meter and some
#: self-heating scatters by a few percent (common practice); a note already
#: flags more than 10 % (rms 0.1). Beyond 28 % the curve is not a diode's.
MAX_RMS = 0.25
#: Smallest emission coefficient of a usable fit. An ideal junction has n = 1
#: (Shockley 1949); recombination raises it towards 2 (Sah, Noyce and Shockley
#: 1957); below 1 there is no junction mechanism, and 0.8 leaves room for scatter.
MIN_EMISSION = 0.8
#: Largest relative 1-sigma of the emission coefficient of a usable fit: 100 %. Points
#: that follow a diode law over even one decade of current fix n to a few percent.
MAX_EMISSION_SIGMA = 1.0
#: Smallest share of the current the junction must carry at the point where it
#: carries the most: 50 %. Below that every point is the leakage resistance's, and the
#: file holds a resistor, not a diode.
MIN_JUNCTION_SHARE = 0.5

#: Parameters whose search bound, when the fit ends on it, means the points do
#: not follow the law: (key, which bound) with "lower", "upper" or "either".
#: A series resistance at its lower bound (none) and a leakage resistance at its
#: upper bound (none) are ordinary: the points just do not show them.
_PINNED = {
    "saturation_current_a": "either",
    "emission": "either",
    "band_gap_ev": "either",
    "xti": "either",
    "series_resistance_ohm": "upper",
    "leakage_resistance_ohm": "lower",
}

_WHAT = {
    "saturation_current_a": "saturation current",
    "emission": "emission coefficient",
    "series_resistance_ohm": "series resistance",
    "leakage_resistance_ohm": "leakage resistance",
    "band_gap_ev": "band gap",
    "xti": "XTI",
}


def problems(params: dict, pinned: dict, rms: float, worst_lines, *, emission_sigma: float | None = None,
             junction_share: float = 1.0, settled: bool = True) -> tuple[str, ...]:
    """What makes a fit unusable, each as a clause saying what is wrong and what to do.

    Parameters
    ----------
    params : dict
        Fitted values by key (``emission`` among them).
    pinned : dict
        ``{key: "lower" | "upper"}`` for each fitted parameter that ended on a
        search bound.
    rms : float
        Root mean square residual on the ln-of-current scale.
    worst_lines : sequence of int
        File lines of the worst points, worst first.
    emission_sigma : float, optional
        1-sigma uncertainty of the emission coefficient (None: not known).
    junction_share : float
        Largest share of the measured current the junction (not the leakage
        resistance) carries at any forward point of the fit.
    settled : bool
        Whether the least-squares run converged within its evaluation budget.

    Returns
    -------
    tuple of str
        Empty for a usable fit.

    Notes
    -----
    The rms residual r on the ln scale is a relative scatter of current of about
    :math:`e^{r} - 1`; the gate is :math:`r \\le 0.25`. The emission coefficient
    of a junction is :math:`n \\ge 1`; the gate is :math:`n \\ge 0.8`.

    References
    ----------
    W. Shockley, "The theory of p-n junctions in semiconductors and p-n junction
    transistors", Bell System Technical Journal 28(3), 435-489, 1949 (n = 1).
    C. T. Sah, R. N. Noyce and W. Shockley, "Carrier generation and recombination
    in p-n junctions and p-n junction characteristics", Proc. IRE 45(9),
    1228-1243, 1957 (n up to 2).
    """
    out = []
    lines = ", ".join(str(int(k)) for k in list(worst_lines)[:3])
    stuck = [_WHAT[key] for key, side in pinned.items()
             if _PINNED.get(key) is not None and _PINNED[key] in ("either", side)]
    if stuck:
        which = stuck[0] if len(stuck) == 1 else ", ".join(stuck[:-1]) + " and " + stuck[-1]
        out.append(f"the {which} ended on {'its search bound' if len(stuck) == 1 else 'their search bounds'}, "
                   "so the points do not follow a diode law: check that the columns are voltage in volts and "
                   "current in amperes, one diode per file")
    if junction_share < MIN_JUNCTION_SHARE:
        r_p = params.get("leakage_resistance_ohm", math.inf)
        out.append(f"the junction carries almost none of the current at any point: the points are those of a "
                   f"resistor of about {r_p:.3g} ohm; check that the file holds the diode's own points, measured "
                   "in forward bias up to its working current")
    n = params.get("emission")
    if (emission_sigma is not None and n and math.isfinite(emission_sigma) and emission_sigma > MAX_EMISSION_SIGMA * n
            and not stuck and junction_share >= MIN_JUNCTION_SHARE):
        out.append(f"the points do not determine the emission coefficient (1-sigma {100 * emission_sigma / n:.2g} %): "
                   "give forward points over several decades of current, one every 20 to 50 mV")
    if n is not None and math.isfinite(n) and n < MIN_EMISSION and "emission" not in pinned:
        out.append(f"the emission coefficient {n:.3g} is below any junction's (an ideal junction has 1): check "
                   "the voltage column (volts, anode minus cathode)")
    if not (rms <= MAX_RMS):
        pct = 100 * math.expm1(min(rms, 700.0)) if math.isfinite(rms) else math.inf
        out.append(f"the points scatter about the best fit by {pct:.3g} % rms (a usable fit scatters by at most "
                   f"{100 * math.expm1(MAX_RMS):.0f} %): check the points at line(s) {lines} for typing errors, "
                   "units and readings taken while the diode was heating up")
    if not settled:
        out.append("the fit did not settle within its step budget, which points that follow a diode law always do: "
                   "check the points for typing errors and units")
    return tuple(out)
