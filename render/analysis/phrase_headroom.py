"""A phrase's headroom for many designs at once, for ``render fit``'s ``phrase_headroom_db`` aim.

Below the limit the op-amp output is linear, so a phrase's largest
excursion needs no render: with u = (v_a + v_b)/2 and w = (v_a − v_b)/2 the
mean and half-difference of the string velocity at the two sensing points
(as in :mod:`render.chain.stream`),

    x_lin(t) − V_b = F⁻¹{ M(f)·U(f) + N(f)·W(f) }(t) + hum(t),

M = sig_a·H_a + sig_b·H_b and N = sig_a·H_a − sig_b·H_b the design's exact
rational responses to the op-amp output, evaluated at the FFT's bins (the
phrase zero-padded by :data:`TAIL_S` so the circular convolution does not
wrap), and hum(t) the field's steady state at the op-amp output, as the
render adds it. The peak between samples is found by band-limited
(Kaiser-windowed sinc) interpolation around the largest and smallest
samples. Then, as :mod:`render.analysis.headroom` defines it,

    phrase_headroom_db = min( 20·log10(onset_up / e_up), 20·log10(onset_down / e_down) ).

The phrase is synthesised once, at the start design's sensing points; a fit
that moves a coil's position or aperture is refused with this aim.
"""

from __future__ import annotations

import numpy as np

from .headroom import margin_db

TAIL_S = 0.25  # s of silence after the phrase: the responses' tails decay well within it (common practice, no source)
CHUNK = 8  # designs per batch of FFTs (bounds memory: a few hundred MB at most for a 10 s phrase)
GRID_HZ = 2.0  # Hz between exact evaluations of the responses (common practice, no source)
SUBSTEPS = 16  # between-sample points searched around each extreme
HALF_TAPS = 48  # samples each side of the windowed-sinc interpolator
KAISER_BETA = 8.6  # about -90 dB side lobes (Kaiser & Schafer, IEEE Trans. ASSP 28(1), 1980; common practice)


def _refine(x: np.ndarray, k: int, sign: float) -> float:
    """The band-limited extreme of ``x`` near sample k (the largest of sign·x), by Kaiser-windowed sinc interpolation
    at :data:`SUBSTEPS` points per sample within one sample either side."""
    lo, hi = max(k - HALF_TAPS, 0), min(k + HALF_TAPS + 1, x.size)
    t = np.arange(lo, hi)
    at = k + np.arange(-SUBSTEPS + 1, SUBSTEPS) / SUBSTEPS
    d = at[:, None] - t[None, :]
    r = np.clip(1.0 - (d / (HALF_TAPS + 1)) ** 2, 0.0, None)
    kernel = np.sinc(d) * np.i0(KAISER_BETA * np.sqrt(r)) / np.i0(KAISER_BETA)
    return sign * max(sign * float(x[k]), float(np.max(sign * (kernel @ x[lo:hi]))))


class PhraseHeadroom:
    """The phrase's spectrum, kept to score candidates' headroom (:meth:`margins`).

    Parameters
    ----------
    dry : render.dry.Dry
        The phrase at the start design's sensing points.
    hum : bool
        Add the field's steady state, as ``render clips`` does by default.
    """

    def __init__(self, dry, *, hum: bool = True):
        from scipy.fft import next_fast_len, rfft, rfftfreq

        v = np.asarray(dry.velocity, dtype=float)
        self.fs = float(dry.sample_rate)
        self.n = v.shape[1]
        self.length = next_fast_len(self.n + int(TAIL_S * self.fs), real=True)
        self.u = rfft(0.5 * (v[0] + v[1]), self.length).astype(np.complex64)
        self.w = rfft(0.5 * (v[0] - v[1]), self.length).astype(np.complex64)
        self.has_difference = bool(np.any(v[0] != v[1]))
        self.f = rfftfreq(self.length, 1.0 / self.fs)
        self.step = max(1, int(GRID_HZ / (self.f[1] - self.f[0])))
        self.hum = bool(hum)

    def _on_bins(self, rational) -> np.ndarray:
        """A response at every FFT bin, shape (N, bins): exact on a grid every :data:`GRID_HZ`, linear between
        (the responses are smooth on that scale: their narrowest features are resonances hundreds of Hz wide)."""
        grid = np.append(self.f[:: self.step], self.f[-1])
        h = rational(grid)
        out = np.empty((h.shape[0], self.f.size), dtype=np.complex64)
        for row, o in zip(h, out):
            o.real = np.interp(self.f, grid, row.real)
            o.imag = np.interp(self.f, grid, row.imag)
        return out

    def _hum(self, design, resp, i: int) -> np.ndarray:
        from ..chain import hum as hm

        h = design.hum
        harmonics = np.asarray(h.harmonics, dtype=float)
        if not self.hum or not harmonics.size:
            return np.zeros(self.n)
        freqs = hm.harmonic_frequencies(mains_hz=h.mains, harmonics=harmonics)
        if h.sources:
            from ..circuit.engine import responses
            from ..circuit.params import from_designs
            from ..magnetics.hum import steady_samples
            from ..magnetics.pickup import amp_output_phasors

            phasors = np.where(freqs < self.fs / 2, amp_output_phasors(design, responses(from_designs([design]))), 0.0)
            return steady_samples(phasors, self.n, sample_rate=self.fs, mains_hz=h.mains, start=0)
        gains = np.where(freqs < self.fs / 2, resp.amp.mix(resp.hum_a, resp.hum_b)(freqs)[i], 0.0)
        period = self.fs / h.mains
        n = int(round(period)) if abs(period - round(period)) < 1e-9 * period else self.n  # one mains period, repeated, when it is whole samples
        one = hm.steady_response(gains, min(n, self.n), sample_rate=self.fs, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics, start=0)
        return np.tile(one, -(-self.n // one.size))[: self.n]

    def excursions(self, designs) -> np.ndarray:
        """Largest linear excursions of the op-amp output from its rest point, up and down: shape (N, 2), V."""
        from scipy.fft import irfft

        from ..circuit.engine import responses
        from ..circuit.params import from_designs

        designs = list(designs)
        out = np.zeros((len(designs), 2))
        for c0 in range(0, len(designs), CHUNK):
            part = designs[c0 : c0 + CHUNK]
            resp = responses(from_designs(part))
            spec = self._on_bins(resp.amp.mix(resp.sig_a, resp.sig_b)) * self.u
            if self.has_difference:
                spec = spec + self._on_bins(resp.amp.mix(resp.sig_a, -resp.sig_b)) * self.w
            x = irfft(spec, self.length, axis=-1)[:, : self.n].astype(float)
            for i, d in enumerate(part):
                xi = x[i] + self._hum(d, resp, i)
                out[c0 + i, 0] = max(0.0, _refine(xi, int(np.argmax(xi)), 1.0))
                out[c0 + i, 1] = max(0.0, -_refine(xi, int(np.argmin(xi)), -1.0))
        return out

    def margins(self, designs) -> np.ndarray:
        """``phrase_headroom_db`` of each design: the smaller margin to the limit's onset, dB, shape (N,); NaN with no excursion."""
        from ..chain.limit import design_window
        from ..chain.loop import dc_output

        designs = list(designs)
        e = self.excursions(designs)
        out = np.full(len(designs), np.nan)
        for i, d in enumerate(designs):
            win, b = design_window(d), dc_output(d)
            m = [x for x in (margin_db(win.linear_high - b, e[i, 0]), margin_db(b - win.linear_low, e[i, 1])) if x is not None]
            if m:
                out[i] = min(m)
        return out
