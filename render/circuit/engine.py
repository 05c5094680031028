"""The engine: a design (or N of them) in, rational transfer functions out.

Everything here is small-signal and linear; the DC bias point and the soft
limit are handled by the renderer. All transfer functions are
:class:`~render.circuit.poly.Rational` batches, exact to float rounding,
from which the renderer builds second-order sections.

Signal conventions: coil EMFs are e_a = signal_polarity · sensitivity · v
(+ hum) and likewise e_b; "velocity" responses take the same string
velocity v at both sensing points. The output is the voltage at the
amplifier input (the volume pot's wiper, at the cable's far end).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .coil import coil_impedance
from .params import Params, from_designs
from .poly import W_NORM, Rational, lin, padd, pmul, pscale, series
from .preamp import Amplifier, amplifier, output_chain_parts
from .rig import rig_chain


@dataclass(frozen=True)
class Responses:
    """Transfer functions of N designs (batched :class:`Rational`, x = s/w_norm).

    Attributes (all V/V unless said otherwise)
    ------------------------------------------
    amp : Amplifier
        e_a, e_b -> op-amp output (``amp.from_a()``, ``amp.from_b()``, ``amp.mix``).
    out_stage : Rational
        op-amp output -> amp input, through the output network, controls and cable.
    jack_stage : Rational
        op-amp output -> the jack (before the controls).
    z_out : Rational
        Impedance looking back into the output network from the jack (ohm).
    passive_from_a, passive_from_b : Rational
        Each coil's EMF -> amp input in the passive reference.
    z_out_passive : Rational
        Impedance of the passive reference's two coils at the jack (ohm).
    sig_a, sig_b, hum_a, hum_b : np.ndarray, shape (N,)
        Source weights: V per m/s of string velocity and V per T/s of dB/dt.
    """

    amp: Amplifier
    out_stage: Rational
    jack_stage: Rational
    z_out: Rational
    passive_from_a: Rational
    passive_from_b: Rational
    passive_mix_parts: tuple
    z_out_passive: Rational
    sig_a: np.ndarray
    sig_b: np.ndarray
    hum_a: np.ndarray
    hum_b: np.ndarray

    @property
    def n(self) -> int:
        return self.sig_a.shape[0]

    # --- active -----------------------------------------------------------
    def velocity_to_amp_output(self) -> Rational:
        """String velocity -> op-amp output (V per m/s)."""
        return self.amp.mix(self.sig_a, self.sig_b)

    def velocity(self) -> Rational:
        """String velocity -> amp input (V per m/s); the design's response."""
        return self.velocity_to_amp_output() * self.out_stage

    def from_a(self) -> Rational:
        """coil_a's EMF -> amp input (V/V)."""
        return self.amp.from_a() * self.out_stage

    def from_b(self) -> Rational:
        """coil_b's EMF -> amp input (V/V)."""
        return self.amp.from_b() * self.out_stage

    def hum(self) -> Rational:
        """Uniform field: dB/dt -> amp input (V per T/s), both coils' hum EMFs together."""
        return self.amp.mix(self.hum_a, self.hum_b) * self.out_stage

    # --- passive reference ---------------------------------------------------
    def passive_mix(self, wa, wb) -> Rational:
        d_a_pb, d_b_pa, s_rig, a_tot, w = self.passive_mix_parts
        num = pmul(padd(pscale(d_a_pb, wa), pscale(d_b_pa, -np.asarray(wb, float))), s_rig)
        return Rational(num, a_tot, w)

    def passive_velocity(self) -> Rational:
        """String velocity -> amp input for the passive reference (V per m/s)."""
        return self.passive_mix(self.sig_a, self.sig_b)

    def passive_hum(self) -> Rational:
        """dB/dt -> amp input for the passive reference (V per T/s)."""
        return self.passive_mix(self.hum_a, self.hum_b)


def responses(p: Params, w: float = W_NORM) -> Responses:
    """All small-signal transfer functions of the N designs in ``p``."""
    amp = amplifier(p, w)
    pre, at_jack = output_chain_parts(p, w)
    rig = rig_chain(p.rig, w)
    jr = at_jack @ rig
    total = pre @ jr
    out_stage = Rational(total.scale, total.a, w)
    jack_stage = Rational(pmul(jr.a, pre.scale), total.a, w)
    src = pre @ at_jack
    z_out = Rational(src.b, src.a, w)

    # Passive reference: ground - coil_b (reversed) - coil_a - jack, each coil
    # with its winding capacitance across it, i.e. a Thevenin source
    # e·d/P in series with n/P, where Z_coil = n/d and P = d + sC_w·n.
    na, da = coil_impedance(p.coil_a, w)
    nb, db = coil_impedance(p.coil_b, w)
    pa = padd(da, pmul(lin(0.0, p.coil_a.Cw * w), na))
    pb = padd(db, pmul(lin(0.0, p.coil_b.Cw * w), nb))
    zs_n = padd(pmul(na, pb), pmul(nb, pa))
    zs_d = pmul(pa, pb)
    prig = rig_chain(p.passive_rig, w)
    ptot = series(zs_n, zs_d) @ prig
    d_a_pb = pmul(da, pb)
    d_b_pa = pmul(db, pa)
    passive_from_a = Rational(pmul(d_a_pb, prig.scale), ptot.a, w)
    passive_from_b = Rational(-pmul(d_b_pa, prig.scale), ptot.a, w)
    return Responses(
        amp=amp,
        out_stage=out_stage,
        jack_stage=jack_stage,
        z_out=z_out,
        passive_from_a=passive_from_a,
        passive_from_b=passive_from_b,
        passive_mix_parts=(d_a_pb, d_b_pa, prig.scale, ptot.a, w),
        z_out_passive=Rational(zs_n, zs_d, w),
        sig_a=p.coil_a.sig,
        sig_b=p.coil_b.sig,
        hum_a=p.coil_a.hum,
        hum_b=p.coil_b.hum,
    )


def design_responses(designs) -> Responses:
    """Convenience: :func:`responses` of validated designs (rigs applied)."""
    return responses(from_designs(list(designs)))
