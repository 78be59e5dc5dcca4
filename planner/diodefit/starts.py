"""Starting points of the diode fit, read off the shape of the forward curve."""

from __future__ import annotations

import math

import numpy as np

from ..solve import thermal_voltage

def _starts(v, i, t, t0, forward, free, held):
    """Starting points for the fit from the shape of the forward curve."""
    vt0 = float(thermal_voltage(t0))
    slopes, ln_is = [], {}
    for tk in np.unique(t):
        sel = forward & (t == tk)
        vv, li = v[sel], np.log(i[sel])
        order = np.argsort(vv)
        vv, li = vv[order], li[order]
        best_slope, best_win = -np.inf, (0, len(vv))
        width = min(3, len(vv))
        for a in range(0, len(vv) - width + 1):
            xs, ys = vv[a:a + width], li[a:a + width]
            if np.ptp(xs) <= 0:
                continue
            s = np.polyfit(xs, ys, 1)[0]
            if s > best_slope:
                best_slope, best_win = s, (a, a + width)
        n_k = 1.0 / (float(thermal_voltage(tk)) * best_slope) if best_slope > 0 else 2.0
        slopes.append(float(np.clip(n_k, 0.5, 5.0)))
        a, b = best_win
        ln_is[float(tk)] = (vv[a:b], li[a:b])
    n0 = float(np.median(slopes))
    is_t = {tk: float(np.exp(np.mean(li - vv / (n0 * float(thermal_voltage(tk))))))
            for tk, (vv, li) in ln_is.items()}
    eg0, xti0 = held[4], held[5]
    if 4 in free and len(is_t) >= 2:
        # E_g from ln I_s(T) with XTI held: least squares on the law's linear form
        tk = np.array(sorted(is_t))
        y = np.log([is_t[x] for x in tk])
        vt_k = thermal_voltage(tk)
        x_eg = (tk / t0 - 1.0) / (n0 * vt_k)
        y = y - (xti0 / n0) * np.log(tk / t0)
        a_mat = np.stack([np.ones_like(x_eg), x_eg], axis=1)
        coef = np.linalg.lstsq(a_mat, y, rcond=None)[0]
        eg0 = float(np.clip(coef[1], 0.3, 2.5))
    i_s0 = is_t.get(float(t0)) or float(np.exp(np.mean(np.log(list(is_t.values())))))
    # R_s from the highest forward point's excess voltage
    k = int(np.argmax(np.where(forward, i, -np.inf)))
    vj = n0 * float(thermal_voltage(t[k])) * math.log1p(i[k] / i_s0)
    r_s0 = float(np.clip((v[k] - vj) / i[k], 1e-3 * n0 * vt0 / i[k], 1e5))
    # R_p from reverse points (V < 0, I < 0), else from low forward points' excess current
    rev = (v < 0) & (i < 0)
    cand = []
    if rev.any():
        cand = list(v[rev] / (i[rev] + i_s0))
    else:
        excess = i[forward] - i_s0 * np.expm1(v[forward] / (n0 * vt0))
        ok = excess > 0.1 * i[forward]
        cand = list(v[forward][ok] / excess[ok])
    cand = [c for c in cand if np.isfinite(c) and c > 0]
    r_p0 = float(np.clip(np.median(cand), 10.0, 1e11)) if cand else 1e11
    base = np.array([i_s0, n0, r_s0, r_p0, eg0, xti0])
    alt = base.copy()
    alt[2], alt[3] = 1e-3 * n0 * vt0 / float(np.max(i[forward])), 1e11
    return [base, alt]

