"""The likely cause of a ramp that goes wrong, where the physics says it — never a guess.

A load-loss ramp drives current through the short-circuit impedance: at a measured voltage U the
unit draws I = U / Z, that is I / I_rated = (U / U_rated) / z, with z the guaranteed impedance
(per unit). A current far below that at a voltage where it would be well above the analyser's
noise means the circuit is open: the short-circuit link missing, open or loose, or a lead off.
A no-load ramp draws the magnetising current, which the guaranteed no-load current predicts
(``config.reach.magnetising_current``); a current several times that is what a shorted turn
draws. Without the guarantee the prediction cannot be made, and nothing is said.
"""

from __future__ import annotations

from harness.config.reach import current_per_volt, magnetising_current
from harness.runner.context import Run, Sample

# An open link leaves the magnetising current only: far below a quarter of the prediction. A
# fitted link on a unit whose impedance is within any tolerance of its guarantee draws well
# above it (IEC 60076-1 Table 1 allows 7.5 % or 10 % of the guaranteed impedance).
OPEN_CIRCUIT_SHARE = 0.25
# Judge from where the predicted current is 2 % of rated: above the noise of ranges opened to the
# step's limits, and reached by a current ramp's first setpoint on any unit up to 25 % impedance.
JUDGE_FROM_RATED_SHARE = 0.02
# A magnetising current this many times the predicted one is not a core near its knee at or
# below rated voltage (common practice, no source).
SHORTED_TURN_FACTOR = 3.0


def open_circuit(run: Run, s: Sample, judge_from: float = JUDGE_FROM_RATED_SHARE) -> str | None:
    """A load-loss ramp whose current is far below what the guaranteed impedance predicts, judged
    once the prediction reaches ``judge_from`` of rated current (the ramp asks with 0 when its
    next setpoint was refused: the refusal has stopped the bay, this only says why)."""
    guarantees = run.sequence.guarantees
    z_pct = guarantees.impedance if guarantees is not None else None
    if z_pct is None or s.u_rms <= 0:
        return None
    rated = run.rated("current")
    predicted = current_per_volt(run.rated("voltage"), rated, z_pct) * s.u_rms
    if predicted < judge_from * rated or s.i_rms >= OPEN_CIRCUIT_SHARE * predicted:
        return None
    return (f"load-loss ramp stopped: at {s.u_rms:.4g} V the current is {s.i_rms:.4g} A, only "
            f"{100 * s.i_rms / predicted:.2g} % of the {predicted:.4g} A the guaranteed impedance "
            f"({z_pct:g} %) predicts - is the short-circuit link fitted and tight, and the source connected "
            f"to the winding the sequence names?")


def excess_magnetising(run: Run, s: Sample, current: float) -> str | None:
    """A no-load current several times the magnetising current the guarantee predicts."""
    guarantees = run.sequence.guarantees
    i0_pct = guarantees.no_load_current if guarantees is not None else None
    voltage_pu = s.u_mean / run.rated("voltage")
    if i0_pct is None or voltage_pu <= 0 or voltage_pu > 1.0:
        return None
    expected = magnetising_current(i0_pct, run.rated("current"), voltage_pu)
    if current < SHORTED_TURN_FACTOR * expected:
        return None
    return (f"at {s.u_mean:.4g} V the no-load current {current:.4g} A is {current / expected:.0f} times the "
            f"{expected:.3g} A the guaranteed no-load current ({i0_pct:g} %) predicts - a shorted turn draws "
            f"this; have the winding examined before it is energised again")
