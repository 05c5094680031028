"""The amplifier output's soft limit, and its first-order antiderivative form.

The op-amp output cannot swing closer than ``margin_low`` to ground or
``margin_high`` to the battery. The limit used here is

    f(x) = x − ψ(x − a) + ψ(b − x),      a = high − knee,  b = low + knee,

with the one-sided knee function (a quadratic spline)

    ψ(u) = 0             for u ≤ 0
           u² / (4·knee)  for 0 ≤ u ≤ 2·knee
           u − knee       for u ≥ 2·knee.

So f is exactly the identity on [low + knee, high − knee]; across
[high − knee, high + knee] it bends along a parabola whose slope falls
linearly from 1 to 0, and it *reaches* the rail ``high`` at x = high + knee
with zero slope (it does not approach it asymptotically); beyond, it is the
constant ``high``. Mirror image at the bottom. f is continuous with a
continuous slope (its second derivative jumps by 1/(2·knee) at the four
knee ends), monotonic (slope in [0, 1]), and never leaves [low, high].
Requires 2·knee ≤ high − low, which the design loader enforces strictly.

Antiderivative anti-aliasing (ADAA, first order): the output sample is the
mean of f over the straight segment joining two successive input samples,

    y[n] = (F(x[n]) − F(x[n−1])) / (x[n] − x[n−1]),

with F the closed-form antiderivative of f, falling back to
f((x[n] + x[n−1]) / 2) when |x[n] − x[n−1]| is below ``ADAA_STEP_V``
(Parker, Zavalishin & Le Bivic, "Reducing the aliasing of nonlinear
waveshaping using continuous-time convolution", DAFx-16, pp. 137–144;
Bilbao, Esqueda, Parker & Välimäki, "Antiderivative antialiasing for
memoryless nonlinearities", IEEE Signal Processing Letters 24(7):1049–1053,
2017). On the identity part this is exactly the two-tap mean
(x[n] + x[n−1]) / 2: a half-sample delay and a gentle treble droop, which
the renderer's resampling filters take into account.

The quadratic part of F is split off analytically (the divided difference
of x²/2 is the mean), so the identity region is computed without
cancellation and the knee terms only contribute where they are non-zero.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

ADAA_STEP_V = 1e-5  # V: below this step the ADAA quotient falls back to f(mid) (the fallback: Parker et al., DAFx-16; the value: common practice, no source)


@dataclass(frozen=True)
class Window:
    """The output window of the amplifier.

    low, high : float, V
        The limits the output never passes (``margin_low`` and ``battery − margin_high``).
    knee : float, V, 0 < knee ≤ (high − low)/2
        Width of the soft transition inside each limit.
    """

    low: float
    high: float
    knee: float

    def __post_init__(self):
        if not (self.knee > 0 and self.high > self.low and 2 * self.knee <= self.high - self.low):
            raise ValueError(f"limit window low={self.low!r} V, high={self.high!r} V, knee={self.knee!r} V: needs knee > 0 and 2·knee ≤ high − low")

    @property
    def linear_low(self) -> float:
        """Lower end of the identity region, low + knee (V)."""
        return self.low + self.knee

    @property
    def linear_high(self) -> float:
        """Upper end of the identity region, high − knee (V)."""
        return self.high - self.knee

    @property
    def centre(self) -> float:
        return 0.5 * (self.low + self.high)


def design_window(design) -> Window:
    """The window of a :class:`render.design.Design` (margins and knee of its supply)."""
    return Window(float(design.limit_low_v), float(design.limit_high_v), float(design.supply.knee))


def _knee_integral(u, knee):
    """Ψ(u) = ∫₀ᵘ ψ: 0, u³/(12·knee), then 2·knee²/3 + v²/2 + v·knee with v = u − 2·knee."""
    w = np.clip(u, 0.0, 2.0 * knee)
    v = np.maximum(u - 2.0 * knee, 0.0)
    return w * w * w / (12.0 * knee) + v * (0.5 * v + knee)


def soft_limit(x, *, window: Window) -> np.ndarray:
    """The soft limit f(x).

    x : array_like, V, any shape, any real values
    returns : np.ndarray, V, same shape, within [window.low, window.high];
        exactly x on [window.linear_low, window.linear_high]
    """
    x = np.asarray(x, dtype=float)
    c = window.centre
    k = window.knee
    u = x - c
    # the window is symmetric about c, so one knee at a time: t = depth into it
    t = np.abs(u) - (window.linear_high - c)
    # on the knee, f = rail ∓ (2·knee − t)²/(4·knee): written from the rail so that rounding
    # keeps f monotonic and lands exactly on the rail at t = 2·knee
    q = np.clip(2.0 * k - t, 0.0, 2.0 * k)
    rail = np.where(u >= 0, window.high, window.low)
    y = rail - np.sign(u) * (q * q / (4.0 * k))
    return np.where(t <= 0, x, y)


def soft_limit_integral(x, *, window: Window) -> np.ndarray:
    """F(x) = ∫ f from the window's centre c to x, closed form.

    x : array_like, V, any shape
    returns : np.ndarray, V², same shape: c·u + u²/2 − Ψ(|u| − a), u = x − c,
        a = high − knee − c; dF/dx = :func:`soft_limit`
    """
    x = np.asarray(x, dtype=float)
    c = window.centre
    u = x - c
    a = window.linear_high - c
    return c * u + 0.5 * u * u - _knee_integral(np.abs(u) - a, window.knee)


def soft_limit_adaa(x, *, window: Window, previous: float | None = None) -> tuple[np.ndarray, float]:
    """First-order antiderivative anti-aliased soft limit, block by block.

    x : array_like, V, shape (n,), the limiter's input at the oversampled rate
    window : the output window
    previous : float, V, or None; the input sample before ``x[0]`` (the state
        carried from the previous block; None at the very start, which makes
        the first output f(x[0]))
    returns : (y, last) with y np.ndarray, V, shape (n,), within
        [window.low, window.high]; and last = x[-1], the state for the next block
        (``previous`` again when x is empty)

    Rendering a signal in one call or in consecutive blocks (passing ``last``
    on) gives the same samples to float rounding.
    """
    x = np.asarray(x, dtype=float)
    if x.size == 0:
        return x.copy(), previous  # type: ignore[return-value]  # nothing rendered: the state passes on as it came
    c = window.centre
    k = window.knee
    a = window.linear_high - c
    xs = np.empty(x.size + 1)
    xs[0] = x[0] if previous is None else previous
    xs[1:] = x
    # knee part of F at every sample once; exactly 0 inside the identity region
    knee_part = _knee_integral(np.abs(xs - c) - a, k)
    d = xs[1:] - xs[:-1]
    small = np.abs(d) < ADAA_STEP_V
    dk = knee_part[1:] - knee_part[:-1]
    if small.any():
        d = np.where(small, 1.0, d)
        dk = np.where(small, 0.0, dk)
    # the divided difference of c·u + u²/2 is the two-tap mean: exact on the identity part
    y = (xs[1:] + xs[:-1]) * 0.5
    y -= dk / d
    if small.any():
        y[small] = soft_limit(0.5 * (xs[1:][small] + xs[:-1][small]), window=window)
    np.clip(y, window.low, window.high, out=y)
    return y, float(x[-1])
