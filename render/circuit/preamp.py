"""The active stage: input networks, bias divider, feedback, op-amp, output network.

Topology (interface contract §2). coil_a drives the inverting input through
its network: shunt loading (winding C, load_r, load_c) at the coil's
terminal, then series_c and series_r. coil_b drives the non-inverting node
the same way; that node has bias_top (to the battery +, an AC ground),
bias_bottom and shunt_c to ground. The feedback r ∥ c runs from the output
to the inverting input. The op-amp is ideal or has the single-pole open-loop
gain A(s) = A0 / (1 + s·A0/ω_gbw), written as 1/A = 1/A0 + s/ω_gbw.

With each input network a chain matrix [[A, B], [C, D]] / S from the coil's
EMF e to the amplifier input, the current it drives into a node at voltage
V is (S·e − A·V)/B. Kirchhoff at the two inputs and V− = V+ − Vout/A(s)
give, with Y_f = 1/r + s·c and Y_n the non-inverting node's admittance:

    D_b  = A_b + B_b·Y_n,            V+   = S_b·e_b / D_b
    P    = A_a + B_a·Y_f
    Q    = B_a·Y_f + (1/A)·P
    Vout = (P·V+ − S_a·e_a) / Q

(the difference amplifier of Sedra & Smith, with the coil networks as its
source impedances, in closed form). The output network is the coupling
capacitor and series_r in series, then shunt_r to ground at the jack.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .coil import coil_impedance
from .params import CoilParams, InputParams, Params
from .poly import W_NORM, Chain, Rational, cascade, const, lin, padd, pmul, pscale, series, shunt


def input_chain(c: CoilParams, net: InputParams, w: float = W_NORM) -> Chain:
    """Chain matrix from a coil's EMF to the amplifier input node (node loading not included)."""
    one = const(np.ones_like(c.L))
    zn, zd = coil_impedance(c, w)
    load = shunt(lin(net.Gl, (c.Cw + net.Cl) * w), one)
    ser = series(lin(1.0, net.Rs * net.Cs * w), lin(0.0, net.Cs * w))  # Z = (1 + sRC)/(sC)
    return cascade(series(zn, zd), load, ser)


def output_chain_parts(p: Params, w: float = W_NORM):
    """The output network's series part (op-amp output to jack) and its shunt at the jack."""
    one = const(np.ones_like(p.out_Ro))
    coupling = series(const(one[:, 0]), lin(0.0, p.out_Cc * w))  # Z = 1/(sC)
    resistor = series(const(p.out_Ro), one)
    at_jack = shunt(const(p.out_G), one)
    return cascade(coupling, resistor), at_jack


@dataclass(frozen=True)
class Amplifier:
    """The closed-form pieces of the active stage for N designs (see module doc).

    Vout = (P·S_b/D_b · e_b − S_a · e_a) / Q, DC bias excluded.
    """

    s_a: np.ndarray
    s_b: np.ndarray
    p: np.ndarray
    q: np.ndarray
    d_b: np.ndarray
    w: float

    def from_a(self) -> Rational:
        """Vout / e_a (V/V)."""
        return Rational(-self.s_a, self.q, self.w)

    def from_b(self) -> Rational:
        """Vout / e_b (V/V)."""
        return Rational(pmul(self.p, self.s_b), pmul(self.q, self.d_b), self.w)

    def mix(self, wa, wb) -> Rational:
        """Vout for e_a = wa·u and e_b = wb·u, per unit u (wa, wb scalars or shape (N,))."""
        num = padd(pscale(pmul(self.s_a, self.d_b), -np.asarray(wa, float)), pscale(pmul(self.p, self.s_b), wb))
        return Rational(num, pmul(self.q, self.d_b), self.w)


def amplifier(p: Params, w: float = W_NORM) -> Amplifier:
    """The active stage's transfer functions from each coil's EMF to the op-amp output."""
    ca = input_chain(p.coil_a, p.input_a, w)
    cb = input_chain(p.coil_b, p.input_b, w)
    yf = lin(p.fb_G, p.fb_C * w)
    yn = lin(p.input_b.Gn, p.input_b.Cn * w)
    inv_gain = lin(p.inv_a0, p.inv_gbw * w)
    d_b = padd(cb.a, pmul(cb.b, yn))
    big_p = padd(ca.a, pmul(ca.b, yf))
    q = padd(pmul(ca.b, yf), pmul(inv_gain, big_p))
    return Amplifier(ca.scale, cb.scale, big_p, q, d_b, w)
