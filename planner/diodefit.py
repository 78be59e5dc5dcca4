"""Diode models fitted to measured (voltage, current) points.

``planner fit-diode POINTS.csv`` reads a bench measurement of one diode and fits
the parameters of the contract's diode model (see the design notes, "Element
equations"): saturation current I_s, emission coefficient n, series resistance
R_s and leakage resistance R_p across the junction, and, when the points were
taken at more than one temperature, the band gap E_g (and, from three
temperatures on, XTI) of the SPICE temperature law of I_s.

The fit is weighted least squares on a logarithmic current scale
(:func:`scipy.optimize.least_squares`), with the positive parameters carried as
their logarithms. Forward points (V > 0, I > 0) give the residual
ln(I_model) - ln(I_meas); reverse and near-zero points use an inverse
hyperbolic sine scale that is logarithmic for currents well above a floor and
linear below it. The model current at a given terminal voltage is computed
exactly with the Wright omega function (no iteration). Parameter uncertainties
are the 1-sigma values of the linearised covariance at the solution.

Everything here works in SI floats; units appear only in :func:`format_fit` and
:func:`yaml_block`, which write quantities the project file reads back.
"""

from __future__ import annotations

import csv
import math
import os
import re
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares
from scipy.special import wrightomega

from .errors import ProjectError, SolveError, UsageError
from .model import DEFAULT_T_REF_K, ZERO_CELSIUS_K, DiodeModel
from .solve import thermal_voltage
from .units import format_si

__all__ = [
    "Points",
    "Fit",
    "read_points",
    "diode_current",
    "fit",
    "fit_json",
    "format_fit",
    "yaml_block",
]

#: Band gap held when it cannot be fitted [eV] (contract default, silicon).
DEFAULT_EG_EV = 1.11
#: XTI held when it cannot be fitted (contract default, pn junction).
DEFAULT_XTI = 3.0

#: Columns a points file may have, in the units their names give.
COLUMNS = ("voltage_v", "current_a", "temperature_c")
#: Largest points file accepted [bytes] (5 MB, as for a project file).
MAX_POINTS_BYTES = 5_000_000

#: Order of the internal parameter vector.
_KEYS = (
    "saturation_current_a",
    "emission",
    "series_resistance_ohm",
    "leakage_resistance_ohm",
    "band_gap_ev",
    "xti",
)
#: Parameters carried as natural logarithms in the fit.
_LOG = (True, True, True, True, False, False)
#: Search bounds in the units of ``_KEYS`` (wide; a parameter that ends on one of
#: them is reported as not determined by the data).
_LOWER = (1e-30, 0.3, 1e-6, 1.0, 0.1, -20.0)
_UPPER = (1.0, 10.0, 1e6, 1e12, 3.0, 20.0)

#: YAML keys of the project file (parts.diodes) for the fitted quantities.
_YAML_KEYS = {
    "saturation_current_a": "saturation_current",
    "emission": "emission",
    "series_resistance_ohm": "series_resistance",
    "leakage_resistance_ohm": "leakage_resistance",
    "band_gap_ev": "band_gap",
    "xti": "xti",
}

_LABELS = {
    "saturation_current_a": "saturation current",
    "emission": "emission coefficient",
    "series_resistance_ohm": "series resistance",
    "leakage_resistance_ohm": "leakage resistance",
    "band_gap_ev": "band gap",
    "xti": "XTI",
}

_NAME_RE = re.compile(r"^[A-Za-z_][A-Za-z0-9_.-]*$")


# --- input ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Points:
    """Measured points of one diode.

    Attributes
    ----------
    voltage_v : ndarray
        Terminal voltage, anode minus cathode [V].
    current_a : ndarray
        Current into the anode [A].
    temperature_k : ndarray or None
        Temperature of each point [K]; None when the file has no temperature column.
    lines : ndarray of int
        1-based line of each point in its file (for messages).
    path : str or None
        The file the points came from.
    header_line : int or None
        Line of the header row.
    """

    voltage_v: np.ndarray
    current_a: np.ndarray
    temperature_k: np.ndarray | None = None
    lines: np.ndarray | None = None
    path: str | None = None
    header_line: int | None = None

    def __post_init__(self):
        v = np.atleast_1d(np.asarray(self.voltage_v, dtype=float))
        i = np.atleast_1d(np.asarray(self.current_a, dtype=float))
        if v.shape != i.shape or v.ndim != 1:
            raise ValueError("voltage_v and current_a must be 1-D arrays of one length")
        object.__setattr__(self, "voltage_v", v)
        object.__setattr__(self, "current_a", i)
        if self.temperature_k is not None:
            t = np.broadcast_to(np.asarray(self.temperature_k, dtype=float), v.shape).copy()
            object.__setattr__(self, "temperature_k", t)
        lines = self.lines if self.lines is not None else np.arange(1, v.size + 1)
        object.__setattr__(self, "lines", np.asarray(lines, dtype=int))

    def __len__(self) -> int:
        return int(self.voltage_v.size)


def read_points(path) -> Points:
    """Read a points file: CSV with a header row and one measured point per row.

    Parameters
    ----------
    path : str or os.PathLike
        The file. Its first line that is neither blank nor a comment (``#``) is
        the header ``voltage_v,current_a`` with an optional ``temperature_c``
        column (any order); every later such line is one point: voltage [V],
        current [A], temperature [degC].

    Returns
    -------
    Points

    Raises
    ------
    ProjectError
        For a missing or unreadable file, a missing or wrong header, a row with
        the wrong number of cells, a cell that is not a finite number, a
        temperature below absolute zero, or no points at all. The message names
        the file and line and says what to write instead.
    """
    path = str(path)
    try:
        size = os.stat(path).st_size
        if size > MAX_POINTS_BYTES:
            raise ProjectError(f"the points file is {size / 1e6:.1f} MB; a file of measured points is at most "
                               f"{MAX_POINTS_BYTES / 1e6:g} MB: give the points of one diode", path)
        with open(path, encoding="utf-8-sig", newline="") as fh:
            text = fh.read(MAX_POINTS_BYTES + 1)
    except FileNotFoundError:
        raise ProjectError("no such file; give the path of a CSV file of measured points", path) from None
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise ProjectError(f"cannot read the points file ({reason}); give a readable UTF-8 CSV file",
                           path) from None

    header: list[str] | None = None
    header_line = None
    rows: list[tuple[int, list[str]]] = []
    last_line = 0
    for number, raw in enumerate(text.splitlines(), start=1):
        last_line = number
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c.strip() for c in next(csv.reader([line]))]
        if header is None:
            header, header_line = [c.lower() for c in cells], number
            _check_header(header, cells, path, number)
            continue
        rows.append((number, cells))
    if header is None:
        raise ProjectError(
            "no header row; the first line that is not a comment must be 'voltage_v,current_a' "
            "(add ',temperature_c' for points at several temperatures)", path, max(last_line, 1))
    if not rows:
        raise ProjectError(
            "no points after the header; add one row per measured point, e.g. '0.62,1.0e-3'",
            path, header_line)

    cols = {name: header.index(name) for name in COLUMNS if name in header}
    data = {name: np.empty(len(rows)) for name in cols}
    lines = np.empty(len(rows), dtype=int)
    for k, (number, cells) in enumerate(rows):
        lines[k] = number
        if len(cells) != len(header):
            hint = " (separate the cells with commas, not semicolons)" if ";" in "".join(cells) else ""
            raise ProjectError(
                f"this row has {len(cells)} cell(s) but the header has {len(header)} "
                f"({','.join(header)}); give one value per column{hint}", path, number)
        for name, j in cols.items():
            cell = cells[j]
            try:
                value = float(cell)
            except ValueError:
                what = "blank" if not cell else f"'{cell}' is not a number"
                raise ProjectError(
                    f"{name}: {what}; write a plain number in {_column_unit(name)} "
                    f"(e.g. {_column_example(name)}), no unit text", path, number) from None
            if not math.isfinite(value):
                raise ProjectError(f"{name}: '{cell}' is not a finite number; give a measured value",
                                   path, number)
            if name == "temperature_c" and value <= -ZERO_CELSIUS_K:
                raise ProjectError(
                    f"temperature_c: {cell} degC is at or below absolute zero; give the temperature in "
                    "degrees Celsius", path, number)
            data[name][k] = value
    temps = data.get("temperature_c")
    return Points(
        voltage_v=data["voltage_v"],
        current_a=data["current_a"],
        temperature_k=None if temps is None else temps + ZERO_CELSIUS_K,
        lines=lines,
        path=path,
        header_line=header_line,
    )


def _column_unit(name: str) -> str:
    return {"voltage_v": "volts", "current_a": "amperes", "temperature_c": "degrees Celsius"}[name]


def _column_example(name: str) -> str:
    return {"voltage_v": "0.652", "current_a": "1.5e-3", "temperature_c": "23"}[name]


def _check_header(header: list[str], cells: list[str], path: str, number: int) -> None:
    expected = "'voltage_v,current_a' (optionally ',temperature_c')"
    if all(_is_number(c) for c in cells):
        raise ProjectError(
            f"the first row is data, not a header; add the header line {expected} above it",
            path, number)
    unknown = [c for c, h in zip(cells, header) if h not in COLUMNS]
    if unknown:
        raise ProjectError(
            f"unknown column(s) {', '.join(repr(u) for u in unknown)} in the header; the header must be "
            f"{expected}, with values in volts, amperes and degrees Celsius", path, number)
    dup = sorted({h for h in header if header.count(h) > 1})
    if dup:
        raise ProjectError(f"column {dup[0]!r} appears twice in the header; name each column once",
                           path, number)
    missing = [c for c in COLUMNS[:2] if c not in header]
    if missing:
        raise ProjectError(f"the header lacks {' and '.join(missing)}; the header must be {expected}",
                           path, number)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


# --- the model --------------------------------------------------------------------------


def _arrays(*xs):
    return np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in xs))


def _solve_terminal(v, i_s, nvt, r_s, r_p):
    """Exact terminal current and junction quantities of the diode model.

    Returns ``(i, vj, ie)``: terminal current [A], junction voltage [V] and the
    exponential part of the junction current ``ie = I_s exp(V_j / nV_t)`` [A].
    """
    v, i_s, nvt, r_s, r_p = _arrays(v, i_s, nvt, r_s, r_p)
    g_p = np.where(np.isinf(r_p), 0.0, 1.0 / np.where(np.isinf(r_p), 1.0, r_p))
    has_rs = r_s > 0.0
    rs = np.where(has_rs, r_s, 1.0)
    den = 1.0 + r_s * g_p
    b = i_s / den
    c = (g_p * v - i_s) / den
    # ln of the Wright omega argument: ln(b R_s / nV_t) + (V - c R_s) / nV_t
    lin = (v - c * r_s) / nvt
    with np.errstate(over="ignore", under="ignore", invalid="ignore", divide="ignore"):
        x = np.log(b * rs / nvt) + lin
        w = np.where(has_rs, np.real(wrightomega(x)), 0.0)
        # junction voltage over nV_t: ln(w) - ln(b R_s / nV_t) when w is not small
        # (no cancellation at high current), else (V - c R_s)/nV_t - w (exact, no underflow)
        big = w >= 1.0
        y = np.where(big, np.log(np.where(big, w, 1.0)) - (x - lin), lin - w)
        y = np.where(has_rs, y, v / nvt)
        em1 = np.expm1(y)
        i_small = (g_p * v + i_s * em1) / den
        i_big = c + (nvt / rs) * w
        i = np.where(big & has_rs, i_big, i_small)
        ie = np.where(big & has_rs, w * nvt * den / rs, i_s * (em1 + 1.0))
    return i, nvt * y, ie


def diode_current(v_v, i_s_a, nvt_v, r_s_ohm=0.0, r_p_ohm=math.inf):
    """Terminal current of a junction with series and leakage resistance [A].

    Vectorised and exact: no iteration, valid from deep reverse bias to high
    forward current (the exponential never overflows).

    Parameters
    ----------
    v_v : float or ndarray
        Terminal voltage, anode minus cathode [V].
    i_s_a : float or ndarray
        Saturation current [A].
    nvt_v : float or ndarray
        Emission coefficient times thermal voltage, n V_t [V].
    r_s_ohm : float or ndarray
        Series resistance [ohm] (0 for none).
    r_p_ohm : float or ndarray
        Leakage resistance across the junction [ohm] (``inf`` for none).

    Returns
    -------
    ndarray
        Current into the anode [A].

    Raises
    ------
    SolveError
        If the result does not satisfy the element equations to 1e-9 (relative),
        e.g. for non-finite inputs.

    Notes
    -----
    The element equations (design contract) are

    .. math:: I = I_s (e^{V_j/nV_t} - 1) + V_j / R_p, \\qquad V = V_j + I R_s .

    With :math:`G_p = 1/R_p`, :math:`D = 1 + R_s G_p`, :math:`b = I_s / D` and
    :math:`c = (G_p V - I_s)/D` they reduce to :math:`I - c = b\\,e^{(V - I R_s)/nV_t}`,
    whose solution is

    .. math:: I = c + \\frac{nV_t}{R_s}\\,
              \\omega\\!\\left(\\ln\\frac{b R_s}{nV_t} + \\frac{V - c R_s}{nV_t}\\right)

    with :math:`\\omega` the Wright omega function (:math:`\\omega e^\\omega = e^x`,
    the Lambert W function of :math:`e^x` on its principal branch). Where
    :math:`\\omega < 1` the current is evaluated as
    :math:`(G_p V + I_s\\,\\mathrm{expm1}(V_j/nV_t))/D` with
    :math:`V_j/nV_t = (V - cR_s)/nV_t - \\omega`, which keeps full relative
    precision near zero bias. The result is checked against both element
    equations.

    References
    ----------
    T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
    through diode with series resistance", Electronics Letters 36(4), 291-292, 2000.
    A. Ortiz-Conde, F. J. Garcia Sanchez and J. Muci, "Exact analytical solutions of
    the forward non-ideal diode equation with series and shunt parasitic
    resistances", Solid-State Electronics 44 (2000) 1861-1864 (from memory; the
    closed form above is derived here directly from the element equations).
    P. W. Lawrence, R. M. Corless and D. J. Jeffrey, "Algorithm 917: Complex
    double-precision evaluation of the Wright omega function", ACM Transactions on
    Mathematical Software 38(3), 2012 (the algorithm of ``scipy.special.wrightomega``).
    """
    i, vj, ie = _solve_terminal(v_v, i_s_a, nvt_v, r_s_ohm, r_p_ohm)
    _check_solution(v_v, i_s_a, nvt_v, r_s_ohm, r_p_ohm, i, vj, ie)
    return i


def _check_solution(v, i_s, nvt, r_s, r_p, i, vj, ie):
    """Raise SolveError unless (i, vj) satisfy both element equations."""
    v, i_s, nvt, r_s, r_p = _arrays(v, i_s, nvt, r_s, r_p)
    g_p = np.where(np.isinf(r_p), 0.0, 1.0 / np.where(np.isinf(r_p), 1.0, r_p))
    with np.errstate(all="ignore"):
        kvl = np.abs(v - vj - i * r_s) / (np.abs(v) + np.abs(vj) + nvt)
        junction = i_s * np.expm1(np.minimum(vj / nvt, 700.0)) + g_p * vj
        kcl = np.abs(i - junction) / (np.abs(i) + i_s + np.abs(g_p * vj) + 1e-300)
        # the junction law is evaluated at a rounded vj: allow for its conditioning
        tol_kcl = 1e-9 + 64 * np.finfo(float).eps * np.abs(vj / nvt)
        bad = ~(np.isfinite(i) & (kvl <= 1e-9) & (kcl <= tol_kcl))
    if np.any(bad):
        k = np.flatnonzero(np.ravel(bad))[0]
        raise SolveError(
            f"diode current at V = {np.ravel(v)[k]:.6g} V did not satisfy the element equations "
            f"(I_s = {np.ravel(i_s)[k]:.4g} A, nV_t = {np.ravel(nvt)[k]:.4g} V, "
            f"R_s = {np.ravel(r_s)[k]:.4g} ohm, R_p = {np.ravel(r_p)[k]:.4g} ohm)")


# --- the fit ------------------------------------------------------------------------------


@dataclass(frozen=True)
class Fit:
    """A fitted diode model with its uncertainty and residuals.

    Attributes
    ----------
    name : str
        Model name for ``parts.diodes``.
    params : dict
        Fitted values by JSON key: ``saturation_current_a`` [A] at
        ``temperature_k``, ``emission``, ``series_resistance_ohm`` [ohm],
        ``leakage_resistance_ohm`` [ohm], ``band_gap_ev`` [eV], ``xti``.
    uncertainty : dict
        1-sigma uncertainty of each fitted parameter, same keys and units; None for
        a parameter that was held or that ended on a search bound.
    residuals : ndarray
        Residual of each point used, on the fit's scale (ln of current for
        forward points, asinh for the others), model minus measurement.
    n_points : int
        Points used in the fit.
    temperatures : tuple of float
        Distinct measurement temperatures [K].
    temperature_k : float
        Temperature at which ``params`` hold [K].
    fitted : tuple of str
        Keys of the parameters that were fitted (the others were held).
    unresolved : tuple of str
        Keys of ``fitted`` the points do not determine: a series resistance held at
        0 or a leakage resistance left out (``inf``) because the points do not show
        it (see ``fit``), or a parameter that ended on its search bound.
    residual_rms, residual_max : float
        Root mean square and largest magnitude of ``residuals``.
    lines : ndarray of int
        File line of each residual.
    forward : ndarray of bool
        Which residuals are on the ln scale.
    current_floor_a : float
        Floor of the asinh scale [A].
    correlation : ndarray
        Correlation matrix of the parameters fitted in the end (``fitted`` order,
        ``unresolved`` ones left out).
    notes : tuple of str
        Remarks for the reader (held parameters, assumed temperature, ...).
    path : str or None
        The points file.
    """

    name: str
    params: dict
    uncertainty: dict
    residuals: np.ndarray
    n_points: int
    temperatures: tuple
    temperature_k: float
    fitted: tuple
    unresolved: tuple = ()
    residual_rms: float = 0.0
    residual_max: float = 0.0
    lines: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=int))
    forward: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=bool))
    current_floor_a: float = 0.0
    correlation: np.ndarray = field(default_factory=lambda: np.zeros((0, 0)))
    notes: tuple = ()
    path: str | None = None

    def model(self, name: str | None = None) -> DiodeModel:
        """The fit as a :class:`planner.model.DiodeModel` (ratings left at their defaults)."""
        p = self.params
        return DiodeModel(
            name=name or self.name,
            i_s_a=p["saturation_current_a"],
            n=p["emission"],
            r_s_ohm=p["series_resistance_ohm"],
            r_p_ohm=p["leakage_resistance_ohm"],
            eg_ev=p["band_gap_ev"],
            xti=p["xti"],
            t_nom_k=self.temperature_k,
        )


class _Problem:
    """Residuals and their Jacobian for a set of points (internal)."""

    def __init__(self, v, i, t, t0, forward, floor, free, held):
        self.v, self.i, self.t, self.t0 = v, i, t, t0
        self.forward, self.floor = forward, floor
        self.free, self.held = free, held  # free: indices into _KEYS; held: full vector
        self.vt = thermal_voltage(t)
        self.ln_ratio = np.log(t / t0)
        self.excess = t / t0 - 1.0
        self.target = np.where(forward, np.log(np.where(forward, i, 1.0)), np.arcsinh(i / (2 * floor)))

    def full(self, z):
        """Full parameter vector in natural units from the free vector ``z``."""
        p = self.held.copy()
        for j, k in enumerate(self.free):
            p[k] = math.exp(z[j]) if _LOG[k] else z[j]
        return p

    def _state(self, z):
        i_s0, n, r_s, r_p, eg, xti = self.full(z)
        law = (xti / n) * self.ln_ratio + self.excess * eg / (n * self.vt)
        i_s = i_s0 * np.exp(law)
        nvt = n * self.vt
        cur, vj, ie = _solve_terminal(self.v, i_s, nvt, r_s, r_p)
        return (i_s0, n, r_s, r_p, eg, xti), law, i_s, nvt, cur, vj, ie

    def residuals(self, z):
        *_, cur, _, _ = self._state(z)
        with np.errstate(all="ignore"):
            model = np.where(self.forward, np.log(np.where(self.forward, np.maximum(cur, 1e-300), 1.0)),
                             np.arcsinh(cur / (2 * self.floor)))
        r = model - self.target
        return np.where(np.isfinite(r), r, 1e3)

    def jacobian(self, z):
        """d residual / d free parameter, by implicit differentiation (see ``fit``)."""
        (i_s0, n, r_s, r_p, eg, xti), law, i_s, nvt, cur, vj, ie = self._state(z)
        g_p = 0.0 if math.isinf(r_p) else 1.0 / r_p
        g_d = ie / nvt + g_p  # junction conductance
        f_i = 1.0 + r_s * g_d
        d_lnis = (ie - i_s) / f_i  # dI / d ln I_s(T)
        cols = {
            0: d_lnis,
            1: -ie * vj / (nvt * f_i) - law * d_lnis,
            2: -g_d * cur * r_s / f_i,
            3: -vj * g_p / f_i,
            4: d_lnis * self.excess / (n * self.vt),
            5: d_lnis * self.ln_ratio / n,
        }
        scale = np.where(self.forward, 1.0 / np.maximum(cur, 1e-300),
                         1.0 / np.sqrt((2 * self.floor) ** 2 + cur ** 2))
        jac = np.stack([cols[k] * scale for k in self.free], axis=1)
        return np.where(np.isfinite(jac), jac, 0.0)


def fit(points: Points, *, name: str = "fitted", temperature_k: float | None = None,
        xti: float | None = None, current_floor_a: float | None = None) -> Fit:
    """Fit the contract's diode model to measured points.

    Parameters
    ----------
    points : Points
        Measured points (see :func:`read_points`).
    name : str
        Model name for ``parts.diodes``.
    temperature_k : float, optional
        Temperature of the measurement [K] when the points carry none (default
        23 degC, the planner's reference temperature).
    xti : float, optional
        Hold XTI at this value. By default XTI is fitted from three or more
        temperatures and held at 3 (contract default) otherwise.
    current_floor_a : float, optional
        Floor of the asinh scale used for reverse and near-zero points [A]
        (default: half the smallest nonzero |current| measured).

    Returns
    -------
    Fit

    Raises
    ------
    ProjectError
        Too few points for the parameters, no forward points, fewer than two
        forward voltages at some temperature, or a fit that does not converge.

    Notes
    -----
    Model (design contract, "Element equations"), at the temperature T of each point:

    .. math:: I = I_s(T)\\,(e^{V_j/nV_t(T)} - 1) + V_j/R_p, \\qquad V = V_j + I R_s,

    .. math:: I_s(T) = I_s(T_0)\\,(T/T_0)^{XTI/n}
              \\exp\\left((T/T_0 - 1)\\frac{E_g}{n V_t(T)}\\right).

    Residuals: :math:`r = \\ln I_{model} - \\ln I_{meas}` for forward points
    (V > 0 and I > 0), which weights every point by the same relative error;
    :math:`r = \\operatorname{asinh}(I_{model}/2F) - \\operatorname{asinh}(I_{meas}/2F)`
    for the others, which equals the log residual for |I| >> F and an absolute
    error of scale 2F near zero (F = ``current_floor_a``). Points at exactly 0 V
    carry no information (every parameter set gives 0 A there) and are left out.

    Parameters: :math:`\\ln I_s(T_0), \\ln n, \\ln R_s, \\ln R_p` and, when fitted,
    :math:`E_g` and XTI, solved by :func:`scipy.optimize.least_squares` (trust
    region reflective, inside wide bounds) from two starting points. The Jacobian
    comes from implicit differentiation of :math:`F = I - I_j(V - I R_s) = 0`:
    :math:`\\partial I/\\partial\\theta = -(\\partial F/\\partial\\theta)/(1 + R_s g_d)`
    with :math:`g_d = I_s e^{V_j/nV_t}/nV_t + 1/R_p`.

    Uncertainty: :math:`\\mathrm{cov} = s^2 (J^T J)^{-1}` with
    :math:`s^2 = \\sum r^2 / (m - p)` at the solution, then
    :math:`\\sigma_X = X\\,\\sigma_{\\ln X}` for the log parameters (first order).
    A parameter on a search bound is held there for the covariance.

    Parasitic resistances the points do not show: R_s and R_p have a one-sided
    likelihood (0 ohm and "no leakage" are their far ends), where the linearised
    sigma means little. Each is therefore tested by refitting without it (R_s = 0,
    R_p = inf); if that raises chi-square by less than 9 s^2 (3 sigma for one
    parameter), it is held at none and reported in ``unresolved``, with the free-fit
    value in a note. The weaker one goes first, then the other is tested again.

    Two temperatures give one ratio I_s(T_1)/I_s(T_0), which fixes one
    combination of E_g and XTI only; so E_g is fitted with XTI held, and both are
    fitted from three temperatures on.

    References
    ----------
    P. Antognetti and G. Massobrio, *Semiconductor Device Modeling with SPICE*,
    2nd ed., McGraw-Hill, 1993, diode model (temperature law).
    W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press,
    2007, ch. 15.5 (nonlinear least squares, covariance from the Jacobian) and
    15.6 (confidence limits from changes of chi-square; from memory).
    M. A. Branch, T. F. Coleman and Y. Li, "A subspace, interior, and conjugate
    gradient method for large-scale bound-constrained minimization problems",
    SIAM J. Sci. Comput. 21(1), 1-23, 1999 (the ``trf`` method).
    """
    if not isinstance(name, str) or not _NAME_RE.match(name):
        raise UsageError(f"model name {name!r} is not a plain name; use letters, digits and '_', "
                         "starting with a letter (e.g. 'drawer_si')")
    path = points.path
    v_all, i_all = points.voltage_v, points.current_a
    keep = v_all != 0.0
    notes = []
    if not keep.all():
        notes.append(f"{int((~keep).sum())} point(s) at 0 V left out (they carry no information)")
    v, i, lines = v_all[keep], i_all[keep], points.lines[keep]
    last = int(points.lines.max()) if len(points) else points.header_line

    if points.temperature_k is None:
        t0 = float(DEFAULT_T_REF_K if temperature_k is None else temperature_k)
        if not (t0 > 0 and math.isfinite(t0)):
            raise UsageError(f"measurement temperature {t0} K is not a temperature above absolute zero")
        t = np.full(v.shape, t0)
        if temperature_k is None:
            notes.append("no temperature column: the points are taken as measured at 23 degC")
    else:
        t = points.temperature_k[keep]
    temps = tuple(float(x) for x in np.unique(t))
    if points.temperature_k is not None:
        t0 = min(temps, key=lambda x: (abs(x - DEFAULT_T_REF_K), x))

    forward = (v > 0) & (i > 0)
    if not forward.any():
        if v.size and np.all(v < 0) and np.all(i <= 0):
            hint = ("every point has negative voltage and current: the diode was measured the other "
                    "way round; change the sign of both columns (voltage is anode minus cathode)")
        else:
            hint = ("give points with positive voltage (anode minus cathode) and positive current; "
                    "a voltage and current of opposite signs means one lead was reversed")
        raise ProjectError(f"no forward points; {hint}", path, points.header_line)
    for tk in temps:
        sel = forward & (t == tk)
        if np.unique(v[sel]).size < 2:
            at = f" at {tk - ZERO_CELSIUS_K:.4g} degC" if len(temps) > 1 else ""
            first = int(lines[t == tk][0]) if np.any(t == tk) else last
            raise ProjectError(
                f"fewer than two forward points at different voltages{at}; measure at least two "
                "forward points (more is better: one every 20 to 50 mV over several decades of current)",
                path, first)

    free = [0, 1, 2, 3]
    held = np.array([np.nan, np.nan, np.nan, np.nan, DEFAULT_EG_EV,
                     DEFAULT_XTI if xti is None else float(xti)])
    if len(temps) >= 2:
        free.append(4)
        if len(temps) >= 3 and xti is None:
            free.append(5)
        else:
            why = ("given" if xti is not None else
                   "two temperatures fix one combination of band gap and XTI; "
                   "measure at a third temperature to fit both")
            notes.append(f"XTI held at {held[5]:g} ({why})")
    else:
        notes.append("one temperature: band gap and XTI not fitted (the model's defaults apply); "
                     "measure at a second temperature to fit the band gap")
    if v.size < len(free) + 1:
        raise ProjectError(
            f"{v.size} usable point(s) for {len(free)} parameters; measure at least {len(free) + 1} "
            "points (one more than the parameters, to estimate the scatter), better 15 or more",
            path, last)

    nonzero = np.abs(i[i != 0])
    floor = float(current_floor_a) if current_floor_a is not None else 0.5 * float(nonzero.min())
    if not (floor > 0 and math.isfinite(floor)):
        raise UsageError("current floor must be a positive current in amperes")

    data = (v, i, t, t0, forward, floor)
    run = _least_squares(data, free, held, _starts(v, i, t, t0, forward, free, held))
    if run is None:
        raise ProjectError(
            "the fit did not converge; check the points for typing errors (units: volts and amperes) "
            "and for readings taken while the diode was heating up", path, points.header_line)
    run, dropped = _drop_unseen(data, free, held, run)
    prob, best = run
    z = best.x
    r = prob.residuals(z)
    p_full = prob.full(z)
    # the closed form is exact; confirm the final model currents satisfy the element equations
    _, _, i_s_t, nvt_t, cur, vj, ie = prob._state(z)
    _check_solution(v, i_s_t, nvt_t, p_full[2], p_full[3], cur, vj, ie)

    lower, upper = _bounds(prob.free)
    tol_b = 1e-6
    on_bound = [k for j, k in enumerate(prob.free) if z[j] - lower[j] < tol_b or upper[j] - z[j] < tol_b]
    unresolved = tuple(_KEYS[k] for k in free if k in dropped or k in on_bound)
    cols = [j for j, k in enumerate(prob.free) if k not in on_bound]
    jac = prob.jacobian(z)[:, cols]
    dof = v.size - len(cols)
    s2 = float(r @ r) / dof if dof > 0 else math.nan
    cov, rank_ok = _covariance(jac, s2)
    sig = np.sqrt(np.clip(np.diag(cov), 0.0, None)) if cov.size else np.zeros(0)
    params = {key: float(p_full[k]) for k, key in enumerate(_KEYS)}
    uncertainty = {key: None for key in _KEYS}
    for m, j in enumerate(cols):
        k = prob.free[j]
        value = sig[m] * (p_full[k] if _LOG[k] else 1.0)
        uncertainty[_KEYS[k]] = float(value) if (rank_ok and math.isfinite(value)) else None
    with np.errstate(all="ignore"):
        d = np.sqrt(np.diag(cov))
        corr = cov / np.outer(d, d) if cov.size else cov
    for k, (value, dchi) in dropped.items():
        notes.append(_dropped_note(k, value, dchi))
    for k in on_bound:
        notes.append(f"{_LABELS[_KEYS[k]]} ended on its search bound ({_fmt(_KEYS[k], p_full[k])}): "
                     "the points do not determine it; check them")
    if not rank_ok:
        notes.append("the points do not determine every parameter independently (singular Jacobian); "
                     "uncertainties left out: widen the current range of the measurement")
    mj = [prob.free[j] for j in cols]
    if 4 in mj and 5 in mj and rank_ok:
        rho = corr[mj.index(4), mj.index(5)]
        notes.append(f"band gap and XTI are strongly linked (correlation {rho:+.3f}): "
                     "quote them together")
    fitted = tuple(_KEYS[k] for k in free)
    rms = float(np.sqrt(np.mean(r ** 2)))
    worst = float(np.max(np.abs(r)))
    if rms > 0.1:
        order = np.argsort(-np.abs(r))[:3]
        notes.append("large scatter (rms above 10 % of current): check the points at line(s) "
                     + ", ".join(str(int(lines[k])) for k in order))
    return Fit(
        name=name,
        params=params,
        uncertainty=uncertainty,
        residuals=r,
        n_points=int(v.size),
        temperatures=temps,
        temperature_k=float(t0),
        fitted=fitted,
        unresolved=unresolved,
        residual_rms=rms,
        residual_max=worst,
        lines=lines.copy(),
        forward=forward,
        current_floor_a=floor,
        correlation=corr,
        notes=tuple(notes),
        path=path,
    )


#: Value that means "no such element" for the series (0 ohm) and leakage (none) resistance.
_NONE_VALUE = {2: 0.0, 3: math.inf}
#: Increase of chi-square (in units of the scatter) below which a parasitic resistance
#: counts as not shown by the points: 9, i.e. less than 3 sigma for one parameter. A
#: parasitic resistance has a one-sided likelihood (none is its far end), so the
#: linearised sigma of a weakly shown one is not to be trusted; 3 sigma keeps false
#: detections rare (about 0.3 % of noise-only cases).
_SIGNIFICANCE = 9.0
#: Scatter floor for that test (ln scale): below it residuals are rounding, not data.
_S2_FLOOR = 1e-18


def _bounds(free):
    lower = np.array([math.log(_LOWER[k]) if _LOG[k] else _LOWER[k] for k in free])
    upper = np.array([math.log(_UPPER[k]) if _LOG[k] else _UPPER[k] for k in free])
    return lower, upper


def _least_squares(data, free, held, starts):
    """Best of least-squares runs from ``starts`` (full natural vectors); None if all fail."""
    prob = _Problem(*data, free, held)
    lower, upper = _bounds(free)
    best = None
    for start in starts:
        z0 = np.clip([math.log(start[k]) if _LOG[k] else start[k] for k in free], lower + 1e-9, upper - 1e-9)
        with np.errstate(all="ignore"):
            res = least_squares(prob.residuals, z0, jac=prob.jacobian, bounds=(lower, upper),
                                method="trf", x_scale="jac", ftol=1e-14, xtol=1e-14, gtol=1e-14,
                                max_nfev=3000)
        if res.status > 0 and np.isfinite(res.cost) and (best is None or res.cost < best.cost):
            best = res
    return None if best is None else (prob, best)


def _drop_unseen(data, free, held, run):
    """Hold R_s at 0 and R_p at none where the points do not show them.

    Backward elimination: the parasitic resistance whose removal raises chi-square
    least is removed while that rise is below ``_SIGNIFICANCE`` times the scatter
    of the full fit (a likelihood-ratio test with one degree of freedom).

    Returns the final ``(problem, result)`` and ``{index: (free-fit value, delta chi2)}``.
    """
    prob, res = run
    m = data[0].size
    s2 = max(2.0 * res.cost / max(m - len(free), 1), _S2_FLOOR)
    dropped = {}
    while True:
        trials = []
        for k in (2, 3):
            if k not in prob.free:
                continue
            t_free = [q for q in prob.free if q != k]
            t_held = prob.held.copy()
            t_held[k] = _NONE_VALUE[k]
            start = prob.full(res.x)
            trial = _least_squares(data, t_free, t_held, [start])
            if trial is not None:
                trials.append((2.0 * (trial[1].cost - res.cost) / s2, k, trial, start[k]))
        if not trials:
            break
        dchi, k, trial, value = min(trials, key=lambda x: x[0])
        if dchi >= _SIGNIFICANCE:
            break
        dropped[k] = (value, dchi)
        prob, res = trial
    return (prob, res), dropped


def _dropped_note(k: int, value: float, dchi: float) -> str:
    key = _KEYS[k]
    free_fit = f"free fit {_fmt(key, value)}, improving the fit by {math.sqrt(max(dchi, 0.0)):.1f} sigma"
    if key == "series_resistance_ohm":
        return ("series resistance not resolved by the points (" + free_fit + "): held at 0 ohm; "
                "add points at higher forward current to fit it")
    return ("leakage resistance not resolved by the points (" + free_fit + "): left out (no leakage); "
            "add reverse or very low-current points to fit it")


def _covariance(jac: np.ndarray, s2: float):
    """``s2 (J^T J)^-1`` via the SVD of the column-scaled J, and whether J has full rank.

    Scaling each column to unit norm first makes the rank test independent of the
    parameters' units: a weakly determined parameter gets a large sigma, and only
    a truly degenerate combination counts as rank deficient.
    """
    if jac.size == 0:
        return np.zeros((0, 0)), True
    norm = np.linalg.norm(jac, axis=0)
    norm = np.where(norm > 0, norm, 1.0)
    _, sv, vt = np.linalg.svd(jac / norm, full_matrices=False)
    rank_ok = bool(sv.size and sv[-1] > sv[0] * 1e-8)
    inv = np.where(sv > sv[0] * 1e-15, 1.0 / np.maximum(sv, 1e-300) ** 2, 0.0)
    return s2 * ((vt.T * inv) @ vt) / np.outer(norm, norm), rank_ok


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


# --- output ----------------------------------------------------------------------------------


def fit_json(f: Fit) -> dict:
    """The fit as a JSON-ready dict (SI units, unit in each key).

    Keys (contract): ``saturation_current_a``, ``emission``,
    ``series_resistance_ohm``, ``leakage_resistance_ohm``, ``uncertainty`` (the
    same keys, plus ``band_gap_ev`` and ``xti`` when fitted; null for a value the
    data do not determine), ``residual_rms``, ``n_points``. Also ``band_gap_ev``,
    ``xti``, ``temperature_k``, ``temperatures_k``, ``residual_max``, ``fitted``,
    ``unresolved``, ``notes``, ``yaml``. A leakage resistance the points do not
    show is null (no leakage); an unresolved series resistance is 0.
    """
    keys = _KEYS[:4] + tuple(k for k in _KEYS[4:] if k in f.fitted)
    out = {"name": f.name}
    for key in _KEYS:
        value = f.params[key]
        out[key] = value if math.isfinite(value) else None
    out["uncertainty"] = {key: f.uncertainty[key] for key in keys}
    out.update({
        "residual_rms": f.residual_rms,
        "residual_max": f.residual_max,
        "n_points": f.n_points,
        "temperature_k": f.temperature_k,
        "temperatures_k": list(f.temperatures),
        "current_floor_a": f.current_floor_a,
        "fitted": list(f.fitted),
        "unresolved": list(f.unresolved),
        "notes": list(f.notes),
        "yaml": yaml_block(f),
    })
    return out


def _fmt(key: str, value: float, digits: int = 5) -> str:
    if key == "saturation_current_a":
        return format_si(value, "A", digits)
    if key in ("series_resistance_ohm", "leakage_resistance_ohm"):
        return format_si(value, "ohm", digits)
    if key == "band_gap_ev":
        return f"{value:.{digits}g} eV"
    return f"{value:.{digits}g}"


def _celsius(t_k: float) -> str:
    text = f"{t_k - ZERO_CELSIUS_K:.2f}".rstrip("0").rstrip(".")
    return f"{'0' if text in ('-0', '') else text} degC"


def _rel(f: Fit, key: str) -> str:
    s = f.uncertainty.get(key)
    if s is None:
        return ""
    if _LOG[_KEYS.index(key)]:
        return f"{100 * s / f.params[key]:.2g} %"
    return _fmt(key, s, 2)


def yaml_block(f: Fit, name: str | None = None) -> str:
    """A ``parts.diodes`` entry for the project file, quantities with units.

    Parameters
    ----------
    f : Fit
    name : str, optional
        Entry name (default: the fit's name).

    Returns
    -------
    str
        YAML text: comment lines, then ``name:`` and its keys
        (``saturation_current``, ``emission``, ``series_resistance``,
        ``leakage_resistance``, ``band_gap``, ``xti``, ``temperature``), each value
        written with 5 significant digits and its 1-sigma uncertainty as a comment.
        A series resistance the data do not resolve is written as ``0 ohm``; an
        unresolved leakage resistance and a band gap / XTI that were not fitted are
        left out (the model's defaults apply), with a comment saying so.
    """
    name = name or f.name
    if not _NAME_RE.match(name):
        raise UsageError(f"model name {name!r} is not a plain name; use letters, digits and '_'")
    src = f.path.rsplit("/", 1)[-1] if f.path else "measured points"
    t_text = ", ".join(_celsius(x) for x in f.temperatures)
    lines = [
        f"# fitted from {src}: {f.n_points} points at {t_text}; paste under parts: diodes:",
        "# add max_current, surge_current and max_power from the part's ratings",
        f"{name}:",
    ]
    entries = []
    for key in _KEYS:
        yk = _YAML_KEYS[key]
        if key == "series_resistance_ohm" and key in f.unresolved:
            entries.append((f"{yk}: 0 ohm", "not resolved by the points"))
        elif key == "leakage_resistance_ohm" and key in f.unresolved:
            entries.append((None, f"{yk}: not resolved by the points (no leakage)"))
        elif key in ("band_gap_ev", "xti") and key not in f.fitted:
            if "band_gap_ev" in f.fitted:  # xti held, band gap fitted: say what was held
                entries.append((f"{yk}: {_fmt(key, f.params[key])}", "held, not fitted"))
            else:
                entries.append((None, f"{yk}: not fitted (one temperature), the default applies"))
        else:
            rel = _rel(f, key)
            entries.append((f"{yk}: {_fmt(key, f.params[key])}", f"1-sigma {rel}" if rel else ""))
    entries.append((f"temperature: {_celsius(f.temperature_k)}", "the parameters hold here"))
    width = max(len(e) for e, _ in entries if e) + 2
    for entry, comment in entries:
        if entry is None:
            lines.append(f"  # {comment}")
        elif comment:
            lines.append(f"  {entry.ljust(width)}# {comment}")
        else:
            lines.append(f"  {entry}")
    return "\n".join(lines) + "\n"


def format_fit(f: Fit) -> str:
    """A readable report of the fit followed by the YAML block."""
    src = f.path or "measured points"
    t_text = ", ".join(_celsius(x) for x in f.temperatures)
    out = [
        f"Diode fit '{f.name}' from {src}",
        f"  {f.n_points} points at {t_text}; parameters hold at {_celsius(f.temperature_k)}",
        "",
        f"  {'parameter':<22}{'value':>14}  {'1-sigma':>12}",
    ]
    for key in _KEYS:
        label = _LABELS[key]
        if key not in f.fitted:
            out.append(f"  {label:<22}{_fmt(key, f.params[key]):>14}  {'held':>12}")
            continue
        s = f.uncertainty[key]
        if key in f.unresolved:
            sig = "not resolved"
            shown = {"series_resistance_ohm": "0 ohm", "leakage_resistance_ohm": "none"}.get(
                key, _fmt(key, f.params[key]))
            out.append(f"  {label:<22}{shown:>14}  {sig:>12}")
            continue
        elif s is None:
            sig = "-"
        else:
            sig = _fmt(key, s, 2)
            rel = _rel(f, key)
            if _LOG[_KEYS.index(key)]:
                sig = f"{sig} ({rel})"
        out.append(f"  {label:<22}{_fmt(key, f.params[key]):>14}  {sig:>12}")
    k = int(np.argmax(np.abs(f.residuals))) if f.residuals.size else 0
    out += [
        "",
        f"  residuals (ln of current): rms {f.residual_rms:.3g} "
        f"(about {100 * math.expm1(f.residual_rms):.2g} % "
        f"of current), max {f.residual_max:.3g} at line {int(f.lines[k]) if f.lines.size else '-'}",
    ]
    if (~f.forward).any():
        floor = format_si(f.current_floor_a, "A", 3)
        out.append(f"  reverse and near-zero points on the asinh scale, floor {floor}")
    for note in f.notes:
        out.append(f"  note: {note}")
    out += ["", yaml_block(f).rstrip("\n")]
    return "\n".join(out) + "\n"
