"""One stimulus on one position, every part judged: the ``planner apply`` command."""

from __future__ import annotations

from ..design import as_design
from ..engine import Engine
from ..errors import UsageError
from ..stimulus import Stimulus
from .assess import assess
from .text import stimulus_cautions


def apply_stimulus(design, position, *, volts=None, amps=None, r_source_ohm=0.0, temperature_k=None,
                   waveform="dc", current_limit_a=None, n_phase: int | None = None) -> dict:
    """Apply one stimulus to one position (or transition) and judge every part.

    Parameters
    ----------
    design : Design or Engine
        The project's design (a loaded Spec is built into one), or an engine on it.
    position : str
        Position (or transition state) name.
    volts, amps : float
        Exactly one: the applied voltage [V] or current [A]; DC value (signed) or
        rms of a periodic wave. A voltage on a current position is allowed, and so
        is a current on a voltage position.
    r_source_ohm : float
        Source impedance of a voltage source [ohm].
    temperature_k : float, optional
        Ambient temperature [K].
    waveform : str or Shape
        A name of :data:`planner.stimulus.SHAPES` (``dc``, ``sine``, ``square``,
        ``triangle``, ``impulse``).
    current_limit_a : float, optional
        Current limit of a voltage source [A].
    n_phase : int, optional
        Phase points per cycle; ``PHASE_POINTS`` by default.

    Returns
    -------
    dict
        The ``apply`` JSON of the design contract: ``movement_current_a`` (the DC
        value, or the cycle mean for a periodic wave: what the pointer shows),
        ``movement_multiple`` (largest instantaneous |I_m| / I_fs),
        ``movement_rms_multiple``, ``movement_mean_multiple``, ``parts[]`` (``name``,
        ``kind``, ``current_a``, ``voltage_v``, ``power_w``; the DC value or, for a
        wave, the rms of current and voltage and the mean power; with peak, mean
        and rms beside them), ``verdict``, ``deciding``, ``stresses[]``,
        ``position``, ``stimulus``, ``fuses[]``, ``notes[]``, ``cautions[]``.

    Raises
    ------
    UsageError
        Neither or both of ``volts`` and ``amps``; a bad waveform.
    ProjectError
        An unknown position.
    """
    if (volts is None) == (amps is None):
        raise UsageError("give exactly one of --volts and --amps")
    engine = design if isinstance(design, Engine) else Engine(as_design(design))
    kind = "voltage" if volts is not None else "current"
    value = float(volts if volts is not None else amps)
    stim = Stimulus("applied", kind, value, waveform, float(r_source_ohm), current_limit_a)
    case = assess(engine, position, [stim], temperature_k=temperature_k, with_parts=True, n_phase=n_phase)[0]
    case["parts"] = [_part(p, stim.waveform.single) for p in case["parts"]]
    case["stimulus"] = stim.as_dict()
    case["stimulus_name"] = case["stimulus"]["name"]
    case["temperature_k"] = engine.spec.ambient.t_ref_k if temperature_k is None else float(temperature_k)
    case["cautions"] = stimulus_cautions([stim]) if case["hazardous_voltage"] or stim.hazardous() else []
    return case


def _part(p: dict, single: bool) -> dict:
    """A part's row of ``apply``: the DC value, or the rms of a wave, beside peak, mean and rms."""
    if single:
        cur, vol = p["current_mean_a"], p["voltage_mean_v"]
    else:
        cur, vol = p["current_rms_a"], p["voltage_rms_v"]
    return {"name": p["name"], "kind": p["kind"], "current_a": cur, "voltage_v": vol,
            "power_w": p["power_w"], "current_peak_a": p["current_peak_a"],
            "current_mean_a": p["current_mean_a"], "current_rms_a": p["current_rms_a"],
            "voltage_peak_v": p["voltage_peak_v"], "voltage_mean_v": p["voltage_mean_v"],
            "voltage_rms_v": p["voltage_rms_v"]}
