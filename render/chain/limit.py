"""The amplifier output stage's soft limit.

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
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


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
