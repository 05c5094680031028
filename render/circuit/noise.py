"""Noise sources of the circuit: one transfer function and one density per source.

Every resistance in the circuit is a thermal noise source (Johnson 1928,
Nyquist 1928, Phys. Rev. 32): a voltage of one-sided density 4kT·R in
series with it, or equivalently a current of density 4kT/R across it. The
op-amp adds a voltage noise e_n in series with its non-inverting input and
a current noise i_n into each input, all three uncorrelated. Sources are
independent, so the output density at the amplifier input (the volume
pot's wiper) is

    S_out(f) = Σ_k |H_k(j2πf)|² · S_k(f)                  (V²/Hz)

with H_k the transfer function from source k to the amp input: V/V for a
voltage source, V/A (Ω) for a current source. Each H_k is an exact
:class:`~render.circuit.poly.Rational` built from the same chain matrices
as the signal responses (:mod:`render.circuit.engine`).

How each source reaches the output
----------------------------------
With the input networks' chain matrices [[A, B], [C, D]] / S and P, Q, D_b
of the difference stage (:mod:`render.circuit.preamp`), out = out_stage:

- a coil's own noise: the coil (R_dc + Z_L, its core loss included) is a
  passive one-port at one temperature, so by Nyquist its open-circuit noise
  is a voltage of density 4kT·Re{R_dc + Z_L} in series with its EMF. It is
  reported as two uncorrelated parts, the winding's DC resistance (4kT·R_dc)
  and the core loss (4kT·Re{Z_L}: eddy_resistance and the shorted
  secondary's R2 together). Transfer: that coil's EMF response.
- load_r: a current 4kT/R into the coil's terminal; with the coil's series
  impedance before it, a source transformation makes it a voltage i·Z_coil
  at the EMF, so H = H_emf · Z_coil.
- input_a.series_r (a voltage in series at the end of its network):
  −A_a/Q · out; input_b.series_r: P·A_b/(Q·D_b) · out.
- the bias divider (bias_top ∥ bottom, both to AC ground) and the op-amp's
  current noise at the + input (currents into the non-inverting node):
  P·B_b/(Q·D_b) · out.
- the feedback r and the op-amp's current noise at the − input (currents
  into the inverting node): −B_a/Q · out.
- the op-amp's voltage noise (in series with the + input): P/Q · out.
- after the op-amp: for a network cut into a front part (from the source,
  shorted for noise) and a back part (to the output, open), with
  T = front · back, a series voltage at the cut reaches the output as
  front.a·back.scale/T.a and a current into the cut node as
  front.b·back.scale/T.a. That gives output series_r, shunt_r, the tone
  pot section (a series voltage v in the tone branch injects v·Y_tone into
  the jack), the volume pot's two halves and amp_r.

The passive reference has its two coils' noise (through its EMF responses)
and its controls and amp_r, by the same cuts.

Not modelled: excess (1/f) noise of resistors, the op-amp's 1/f corner and
any correlation between its voltage and current noise; capacitors and the
cable are taken as lossless (noiseless).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .coil import coil_impedance, inductor_impedance
from .engine import Responses, responses
from .params import Params, from_designs
from .poly import W_NORM, Chain, Rational, cascade, const, lin, pmul, series
from .preamp import input_chain, output_chain_parts
from .rig import RigParams, rig_parts

K_BOLTZMANN = 1.380649e-23  # J/K, exact since the 2019 SI redefinition (SI Brochure, 9th ed.)
VOLTAGE, CURRENT = "voltage", "current"


@dataclass(frozen=True)
class NoiseSource:
    """One uncorrelated noise source of N designs and its path to the amp input.

    Attributes
    ----------
    key : str
        Stable identifier, ``"table.key"`` style (``"input_a.series_r"``,
        ``"coil_a.core_loss"``, ``"opamp.voltage"``, ``"rig.amp_r"``).
    label : str
        Short human description.
    kind : str
        ``"voltage"`` (psd in V²/Hz, transfer V/V) or ``"current"``
        (psd in A²/Hz, transfer V/A).
    transfer : Rational, batch of N
        From the source to the amp input.
    psd : np.ndarray, shape (N,), ≥ 0
        One-sided density of the source; an absent part has exactly 0.
    psd_re : Rational or None
        When given, the source's density is ``psd · Re{psd_re(j2πf)}``
        (a coil's core loss: psd = 4kT in V²/(Hz·Ω), psd_re = Z_L in Ω).
    thermal : bool
        True for a resistance's thermal noise (∝ temperature).
    """

    key: str
    label: str
    kind: str
    transfer: Rational
    psd: np.ndarray
    psd_re: Rational | None = None
    thermal: bool = True

    def source_psd(self, frequency_hz) -> np.ndarray:
        """The source's own density at ``frequency_hz`` (F,) -> (N, F), V²/Hz or A²/Hz."""
        f = np.atleast_1d(np.asarray(frequency_hz, float))
        base = np.broadcast_to(self.psd[:, None], (self.psd.shape[0], f.size))
        if self.psd_re is None:
            return np.array(base)
        return base * np.maximum(np.real(self.psd_re(f)), 0.0)

    def output_psd(self, frequency_hz) -> np.ndarray:
        """This source's density at the amp input, |H|²·S, (F,) -> (N, F) in V²/Hz."""
        if not np.any(self.psd):  # an absent part: exactly nothing, without evaluating H
            return np.zeros((self.psd.shape[0], np.atleast_1d(frequency_hz).size))
        h = self.transfer(frequency_hz)
        return (h.real**2 + h.imag**2) * self.source_psd(frequency_hz)


@dataclass(frozen=True)
class NoiseModel:
    """Every noise source of N designs, active circuit and passive reference.

    Attributes
    ----------
    active, passive : tuple of NoiseSource
        Uncorrelated sources; the output density is the sum of their
        :meth:`NoiseSource.output_psd`.
    temperature : np.ndarray, shape (N,)
        K, the temperature of every resistance.
    """

    active: tuple[NoiseSource, ...]
    passive: tuple[NoiseSource, ...]
    temperature: np.ndarray

    def output_psd(self, frequency_hz, *, passive: bool = False) -> np.ndarray:
        """Total density at the amp input, (F,) -> (N, F) in V²/Hz."""
        sources = self.passive if passive else self.active
        return np.sum([s.output_psd(frequency_hz) for s in sources], axis=0)


# ----------------------------------------------------------------------------


def _cut(front: Chain, back: Chain, w: float) -> tuple[Rational, Rational]:
    """Transfers to the open output of ``front @ back`` from the cut between them.

    Returns (series voltage at the cut -> output, V/V; current into the cut
    node -> output, V/A); the front's input port is shorted (a noiseless
    ideal source, or the Thevenin source of the coils).
    """
    total = front @ back
    hv = Rational(pmul(front.a, back.scale), total.a, w)
    hi = Rational(pmul(front.b, back.scale), total.a, w)
    return hv, hi


def _identity(n: int) -> Chain:
    one, zero = const(np.ones(n)), const(np.zeros(n))
    return Chain(one, zero, zero, one, one)


def _rig_sources(front: Chain, r: RigParams, four_kt: np.ndarray, w: float, prefix: str) -> list[NoiseSource]:
    """The controls' and amp_r's thermal noise, with ``front`` the chain up to the jack."""
    tone, upper, at_wiper = rig_parts(r, w)
    _, h_jack = _cut(front, cascade(tone, upper, at_wiper), w)
    y_tone = Rational(lin(0.0, r.tone_C * w), lin(1.0, r.tone_R * r.tone_C * w), w)
    h_upper, _ = _cut(cascade(front, tone), cascade(upper, at_wiper), w)
    _, h_wiper = _cut(cascade(front, tone, upper, at_wiper), _identity(r.amp_G.shape[0]), w)
    return [
        NoiseSource(f"{prefix}.tone_pot", "tone pot (section in series with the tone cap)", VOLTAGE, h_jack * y_tone, four_kt * r.tone_R),
        NoiseSource(f"{prefix}.volume_upper", "volume pot, jack to wiper", VOLTAGE, h_upper, four_kt * r.vol_Ru),
        NoiseSource(f"{prefix}.volume_lower", "volume pot, wiper to ground", CURRENT, h_wiper, four_kt / r.vol_Rd),
        NoiseSource(f"{prefix}.amp_r", "amplifier input resistance", CURRENT, h_wiper, four_kt * r.amp_G),
    ]


def _coil_sources(tag: str, coil, h_emf: Rational, four_kt: np.ndarray, w: float) -> list[NoiseSource]:
    zl_n, zl_d = inductor_impedance(coil, w)
    return [
        NoiseSource(f"{tag}.resistance", f"{tag} winding DC resistance", VOLTAGE, h_emf, four_kt * coil.R),
        NoiseSource(f"{tag}.core_loss", f"{tag} core loss (eddy currents)", VOLTAGE, h_emf, four_kt, psd_re=Rational(zl_n, zl_d, w)),
    ]


def noise_model(
    p: Params,
    *,
    noise_voltage,
    noise_current,
    temperature=300.0,
    w: float = W_NORM,
    resp: Responses | None = None,
) -> NoiseModel:
    """Every noise source of the N designs in ``p``.

    Parameters
    ----------
    p : Params
        N designs (rigs applied).
    noise_voltage : float or np.ndarray, shape (N,), V/√Hz ≥ 0
        The op-amp's input voltage noise density.
    noise_current : float or np.ndarray, shape (N,), A/√Hz ≥ 0
        The op-amp's input current noise density (the same at each input).
    temperature : float or np.ndarray, shape (N,), K > 0
        Of every resistance (300 K unless given).
    resp : Responses, optional
        ``responses(p, w)`` if already computed.
    """
    n = p.n
    resp = responses(p, w) if resp is None else resp
    temp = np.broadcast_to(np.asarray(temperature, float), (n,)).copy()
    en2 = np.broadcast_to(np.asarray(noise_voltage, float), (n,)) ** 2
    in2 = np.broadcast_to(np.asarray(noise_current, float), (n,)) ** 2
    four_kt = 4.0 * K_BOLTZMANN * temp
    amp, out = resp.amp, resp.out_stage

    # --- active: the coils and their loading
    ca = input_chain(p.coil_a, p.input_a, w)
    cb = input_chain(p.coil_b, p.input_b, w)
    za = Rational(*coil_impedance(p.coil_a, w), w)
    zb = Rational(*coil_impedance(p.coil_b, w), w)
    from_a, from_b = resp.from_a(), resp.from_b()
    active = _coil_sources("coil_a", p.coil_a, from_a, four_kt, w) + _coil_sources("coil_b", p.coil_b, from_b, four_kt, w)
    active += [
        NoiseSource("input_a.load_r", "input_a load_r (across coil_a)", CURRENT, from_a * za, four_kt * p.input_a.Gl),
        NoiseSource("input_b.load_r", "input_b load_r (across coil_b)", CURRENT, from_b * zb, four_kt * p.input_b.Gl),
    ]

    # --- active: the difference stage
    qd = pmul(amp.q, amp.d_b)
    series_a = Rational(-ca.a, amp.q, w) * out
    series_b = Rational(pmul(amp.p, cb.a), qd, w) * out
    into_pos = Rational(pmul(amp.p, cb.b), qd, w) * out
    into_neg = Rational(-ca.b, amp.q, w) * out
    at_pos_input = Rational(amp.p, amp.q, w) * out
    active += [
        NoiseSource("input_a.series_r", "input_a series_r", VOLTAGE, series_a, four_kt * p.input_a.Rs),
        NoiseSource("input_b.series_r", "input_b series_r", VOLTAGE, series_b, four_kt * p.input_b.Rs),
        NoiseSource("input_b.bias", "bias divider (bias_top ∥ bias_bottom)", CURRENT, into_pos, four_kt * p.input_b.Gn),
        NoiseSource("feedback.r", "feedback r", CURRENT, into_neg, four_kt * p.fb_G),
        NoiseSource("opamp.voltage", "op-amp voltage noise", VOLTAGE, at_pos_input, en2.copy(), thermal=False),
        NoiseSource("opamp.current_pos", "op-amp current noise, + input", CURRENT, into_pos, in2.copy(), thermal=False),
        NoiseSource("opamp.current_neg", "op-amp current noise, − input", CURRENT, into_neg, in2.copy(), thermal=False),
    ]

    # --- active: output network and rig
    pre, at_jack = output_chain_parts(p, w)
    tone, upper, at_wiper = rig_parts(p.rig, w)
    h_series_out, h_jack = _cut(pre, cascade(at_jack, tone, upper, at_wiper), w)
    active += [
        NoiseSource("output.series_r", "output series_r", VOLTAGE, h_series_out, four_kt * p.out_Ro),
        NoiseSource("output.shunt_r", "output shunt_r (jack to ground)", CURRENT, h_jack, four_kt * p.out_G),
    ]
    active += _rig_sources(cascade(pre, at_jack), p.rig, four_kt, w, "rig")

    # --- passive reference: the two coils in series (Thevenin source), then its rig
    passive = _coil_sources("coil_a", p.coil_a, resp.passive_from_a, four_kt, w)
    passive += _coil_sources("coil_b", p.coil_b, resp.passive_from_b, four_kt, w)
    zs = resp.z_out_passive
    passive += _rig_sources(series(zs.num, zs.den), p.passive_rig, four_kt, w, "rig")  # its own controls, keyed as the active rig's: the list says whose
    return NoiseModel(tuple(active), tuple(passive), temp)


def design_noise_model(designs, *, temperature=300.0) -> NoiseModel:
    """:func:`noise_model` of validated designs (rigs applied), op-amp noise from
    each design's ``supply.noise_voltage`` and ``supply.noise_current``."""
    ds = list(designs)
    return noise_model(
        from_designs(ds),
        noise_voltage=np.array([d.supply.noise_voltage for d in ds]),
        noise_current=np.array([d.supply.noise_current for d in ds]),
        temperature=temperature,
    )
