"""Switch states judged once for the designs of one judgement that hold them alike.

``planner protect`` judges the project as given and each combination of its
protection parts on the misrange matrix (:mod:`planner.protect.judged`). The
combinations differ in a few parts: an input PTC in the voltage positions' common
lead, a crowbar across the ring and a fuse on the mA positions. A switch state
whose current-carrying part holds none of the parts that differ (a voltage
position beside the ring's crowbar) is the same circuit under the same stimuli in
each of them, so its tally (each case's verdict, whether it is accepted and its
deciding ratio) is the same too. :class:`SharedStates` keeps it by what the
judgement of the state reads (:meth:`SharedStates.signature`) and hands it to the
next design that holds the state alike; likewise a position's full-scale reading
at one temperature (:meth:`SharedStates.reading`).

A state's signature holds the nodes of its current-carrying block
(:func:`planner.network.live_part`), every element between two of them and every
closed ideal contact that touches one (what :func:`planner.network.compile_state`
reads), each with all its values and ratings (the file line it was read from left
out), in network order; the state and its positions; and the stimuli. Any other
element carries no current and has no voltage across it in that state: it joins
no node of the compiled circuit, or hangs with both ends on one node of the block
(a part outside the block joined to it at a single node); so it is in the same
state with a fuse opened or a PTC tripped (the same nodes stay joined). Each of
its stresses is then zero, so it neither opens nor decides a case (a zero stress
over its rating is a ratio of zero): what a tally keeps of a case does not depend
on it, whatever its ratings.
"""

from __future__ import annotations

from dataclasses import fields

from .. import network as nw

__all__ = ["SharedStates", "tally_record"]


def tally_record(case: dict) -> dict:
    """What a tally reads of a judged case: ``verdict``, ``accepted``, ``deciding`` (its ``ratio``), ``style``.

    :func:`planner.protect.judged.matrix_score` and :func:`planner.faults.requirements_met`
    read these fields alone.
    """
    deciding = case.get("deciding")
    return {"verdict": case["verdict"], "accepted": case["accepted"],
            "deciding": {"ratio": deciding["ratio"]} if deciding else None, "style": case.get("style")}


class SharedStates:
    """Tallied switch states and readings of the designs of one project that differ in their protection parts.

    Parameters
    ----------
    spec : Spec
        The project. A design shares states only when its project is this one
        with another ``protection`` request (every other field the same object,
        as :func:`dataclasses.replace` makes it): the catalogue, movement, ambient
        and fault sources that judging reads are then the same.

    Attributes
    ----------
    asked, reused : int
        States asked for (:meth:`tally`) and answered from the memo.
    """

    def __init__(self, spec):
        self.spec = spec
        self._tallies: dict = {}
        self._readings: dict = {}
        self._kept_records: dict = {}  # id(network) -> (network, its elements' records)
        self.asked = 0
        self.reused = 0

    def holds(self, design) -> bool:
        """Whether ``design`` is of this project but for its protection parts."""
        a, b = design.spec, self.spec
        return a is b or all(getattr(a, f.name) is getattr(b, f.name) for f in fields(b) if f.name != "protection")

    def signature(self, design, st: nw.SwitchState, stimuli=()) -> tuple | None:
        """What judging ``stimuli`` on state ``st`` of ``design`` reads, as a key; None where it is not shared.

        Not shared: a design of another project (:meth:`holds`), a resistance
        position (its reversed-battery case is solved on another network), a
        state whose compiled circuit would not hold the movement, a key that
        cannot be hashed.
        """
        if not self.holds(design) or st.position.measures == "resistance" or \
                (st.target is not None and st.target.measures == "resistance"):
            return None
        live, _ = nw.live_part(design.net, st)
        if not (set(design.movement.nodes) <= live):
            return None
        parts = nw.live_elements(design.net, st, live, self._records(design))
        key = (st.name, st.kind, nw.record(st.position), None if st.target is None else nw.record(st.target),
               tuple(sorted(live)), parts, tuple(stimuli))
        try:
            hash(key)
        except TypeError:
            return None
        return key

    def _records(self, design) -> list:
        """:func:`planner.network.record` of each element of a design's network, made once per network."""
        net = design.net
        got = self._kept_records.get(id(net))
        if got is None or got[0] is not net:
            got = self._kept_records[id(net)] = (net, [nw.record(e) for e in net.elements])
        return got[1]

    def tally(self, key, judge) -> list[dict]:
        """The :func:`tally_record` of each case of a state: kept under ``key``, else ``judge()``'s cases recorded.

        ``key`` None (:meth:`signature`): judged here, not kept.
        """
        self.asked += 1
        if key is not None and key in self._tallies:
            self.reused += 1
            return self._tallies[key]
        got = [tally_record(c) for c in judge()]
        if key is not None:
            self._tallies[key] = got
        return got

    def reading(self, key, solve) -> float:
        """A reading kept under ``key`` (a :meth:`signature` with the temperature), else ``solve()``'s."""
        if key is None:
            return solve()
        if key not in self._readings:
            self._readings[key] = solve()
        return self._readings[key]
