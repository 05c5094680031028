"""The small-signal response of a design: string velocity to the amp input, with its passive reference."""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError
from ..units import shown

if TYPE_CHECKING:
    from ..design import Design, RigFile


@dataclass(frozen=True)
class Response:
    """A design's small-signal response at given frequencies.

    Attributes
    ----------
    design : Design
        The design, with the rig it was evaluated in.
    frequency_hz : np.ndarray [shape=(F,)], Hz
    velocity : np.ndarray [shape=(F,)], complex, V per m/s
        Voltage at the amp input per m/s of string velocity at both sensing
        points (the figure ``render response --csv`` writes).
    passive : np.ndarray [shape=(F,)], complex, V per m/s
        The same for the design's passive reference (its coils in series, no preamp).
    output_impedance : np.ndarray [shape=(F,)], complex, Ω
        What the rig sees looking back into the pickup's output jack.
    passive_output_impedance : np.ndarray [shape=(F,)], complex, Ω
    """

    design: Design
    frequency_hz: np.ndarray
    velocity: np.ndarray
    passive: np.ndarray
    output_impedance: np.ndarray
    passive_output_impedance: np.ndarray

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    @property
    def magnitude_db(self) -> np.ndarray:
        """20·log10|velocity|: dB re 1 V per m/s, shape (F,)."""
        return 20 * np.log10(np.abs(self.velocity))

    @property
    def passive_magnitude_db(self) -> np.ndarray:
        return 20 * np.log10(np.abs(self.passive))


def response(design: Design, frequency_hz, *, rig: RigFile | None = None) -> Response:
    """The response of ``design`` at ``frequency_hz``.

    Parameters
    ----------
    design : Design
        A validated design (:func:`render.load_design`).
    frequency_hz : float or array_like [shape=(F,)], Hz, > 0
    rig : RigFile or None
        Play into this rig instead of the design's own (:func:`render.load_rig`).

    Returns
    -------
    Response
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..design import apply_rig

    d = apply_rig(design, rig)
    try:
        if np.iscomplexobj(frequency_hz):  # a float cast would only warn and drop the imaginary part
            raise TypeError
        f = np.atleast_1d(np.asarray(frequency_hz, dtype=float))
    except (TypeError, ValueError):
        raise InputError(f"frequency_hz={shown(frequency_hz)}: not numbers; give frequencies in Hz, > 0") from None
    if f.ndim != 1 or f.size == 0:
        raise InputError(f"frequency_hz: shape {f.shape}; give a number or a 1-D array of one or more frequencies in Hz, each > 0")
    bad = f[~(np.isfinite(f) & (f > 0))]
    if bad.size:
        what = "NaN" if np.isnan(bad[0]) else f"{bad[0]:g} Hz"
        raise InputError(f"frequency_hz: {what} among the frequencies; give finite frequencies in Hz, each > 0")
    resp = responses(from_designs([d]))
    return Response(
        design=d,
        frequency_hz=f,
        velocity=resp.velocity()(f)[0],
        passive=resp.passive_velocity()(f)[0],
        output_impedance=resp.z_out(f)[0],
        passive_output_impedance=resp.z_out_passive(f)[0],
    )
