"""Small networks drawn for the stress checks (tests/test_stress*.py).

A voltmeter with and without a clamp across the movement, separate-shunt
ammeters with and without a fuse, and a fused shunt whose swamp resistor keeps
the movement below its end stop, each as a :class:`planner.model.Spec`.
"""

from __future__ import annotations

from planner import model as m


def movement(i_fs=50e-6, r_m=2e3, overload=m.Overload(peg=1.1, short_time=10.0, continuous=1.2)):
    return m.Movement(i_fs_a=i_fs, r_coil_ohm=r_m, class_index=1.5, tempco_per_k=0.0, overload=overload)


def res(name, a, b, value, power=0.25, vmax=250.0):
    return m.Resistor(name, a, b, value, tolerance=0.0, tempco_per_k=0.0, power_w=power, max_voltage_v=vmax)


def clamp_spec(r_mult, r_m, diode: m.DiodeModel | None, i_fs=50e-6, power=0.25):
    """Source -> multiplier R1 -> node m; movement m-com, optional single diode m-com."""
    els = [res("R1", "in", "m", r_mult, power=power, vmax=1e6), m.MovementElement("M1", "m", "com")]
    diodes = {}
    if diode is not None:
        els.append(m.Diode("D1", "m", "com", diode.name))
        diodes = {diode.name: diode}
    net = m.NetworkSpec(tuple(els), (m.Position("P", "voltage", i_fs * (r_mult + r_m), ("in", "com")),))
    return m.Spec("clamp", movement(i_fs, r_m), m.Parts(diodes=diodes), network=net)


def unclamped_voltmeter(power=0.25, vmax=250.0):
    """Chain multiplier 0.5 V / 10 V on a 50 uA, 2 kohm movement, no clamps."""
    els = (m.MovementElement("M1", "m", "com"),
           res("R1", "t1", "m", 8e3, power, vmax),
           res("R2", "t2", "t1", 190e3, power, vmax),
           m.Contact("S1", "plus", "t1", ("0.5 V",)),
           m.Contact("S2", "plus", "t2", ("10 V",)))
    pos = (m.Position("0.5 V", "voltage", 0.5, ("plus", "com")), m.Position("10 V", "voltage", 10.0, ("plus", "com")))
    return m.Spec("voltmeter", movement(), network=m.NetworkSpec(els, pos))


# --- fuses ---------------------------------------------------------------------------------

FUSE = m.FuseModel("f250", r_cold_ohm=0.12, rated_current_a=0.25, breaking_capacity_a=20.0, i2t_a2s=0.05,
                   max_voltage_v=250.0)


def separate_ammeter(fuse: m.FuseModel | None, fuse_in_shunt=False):
    """100 uA, 1 kohm movement across the input; separate shunts for 1 mA and 10 mA."""
    i_fs, r_m = 100e-6, 1e3
    rs1 = r_m * i_fs / (1e-3 - i_fs)  # shunt formula R = R_m I_fs / (I - I_fs), common practice
    rs2 = r_m * i_fs / (10e-3 - i_fs)
    els = [m.MovementElement("M1", "f", "com"),
           res("RS1", "s1", "com", rs1), res("RS2", "s2", "com", rs2, power=0.5),
           m.Contact("S1", "f", "s1", ("1 mA",)), m.Contact("S2", "f", "s2", ("10 mA",))]
    fuses = {}
    inp = "f"
    if fuse is not None:
        fuses = {fuse.name: fuse}
        if fuse_in_shunt:
            els[2] = res("RS2", "s2", "x", rs2, power=0.5)
            els.append(m.Fuse("F1", "x", "com", fuse.name))
        else:
            els.append(m.Fuse("F1", "a", "f", fuse.name))
            inp = "a"
    pos = (m.Position("1 mA", "current", 1e-3, (inp, "com")), m.Position("10 mA", "current", 10e-3, (inp, "com")))
    return m.Spec("ammeter", movement(i_fs, r_m), m.Parts(fuses=fuses), network=m.NetworkSpec(tuple(els), pos)), rs2


def fused_shunt(pulse_energy=None, fuse=FUSE):
    """A fused current range: F1 in the input lead, a 10 ohm shunt, the movement behind 99 kohm.

    The swamp keeps the movement below its end stop under the fault, so the shunt's pulse
    energy alone decides the verdict.
    """
    i_fs, r_m, r_sw, r_s = 100e-6, 1e3, 99e3, 10.0
    full_scale = i_fs * (1.0 + (r_sw + r_m) / r_s)  # shunt formula R_s = (R_sw + R_m) I_fs / (I - I_fs)
    els = (m.Fuse("F1", "a", "f", fuse.name),
           m.Resistor("RS", "f", "com", r_s, tolerance=0.0, tempco_per_k=0.0, power_w=0.25, max_voltage_v=250.0,
                      pulse_energy_j=pulse_energy),
           res("RSW", "f", "m", r_sw),
           m.MovementElement("M1", "m", "com"))
    pos = (m.Position("I", "current", full_scale, ("a", "com")),)
    spec = m.Spec("fused shunt", movement(i_fs, r_m), m.Parts(fuses={fuse.name: fuse}),
                  network=m.NetworkSpec(els, pos))
    return spec, r_s, r_sw + r_m
