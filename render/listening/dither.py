"""Independent dither for every clip file of a session, below the 24-bit step.

Every clip slot of every trial is written as its own file. Without dither the
files of one design would be byte-identical, and anyone comparing files (by
size or hash) could tell which clip X repeats without listening. (A count of
differing bytes still can: the dither moves only each sample's low bytes.)
So each file gets its own triangular-PDF (TPDF) dither: the difference of two
independent uniform draws, spanning ±1 step of a 24-bit quantiser at full
scale ±1 (one step is ``2**-23``). That is the dither that makes a 24-bit
quantiser's error independent of the signal in its first two moments
(Lipshitz, Wannamaker and Vanderkooy, "Quantization and Dither: A Theoretical
Survey", J. Audio Eng. Soc. 40(5), 1992; Vanderkooy and Lipshitz, "Dither in
Digital Audio", J. Audio Eng. Soc. 35(12), 1987); here it only makes the files
differ. Its variance is ``2 · step²/12 = step²/6`` (rms 0.408 step, about
−146.3 dBFS), so two copies of one design differ by ``step²/3`` (rms 0.577
step), below the 24-bit step and far below any program material.

The draws come from the session's seed, so a session stays reproducible from
its seed (the clip names, drawn by :mod:`secrets`, are not)::

    numpy.random.default_rng(numpy.random.SeedSequence([seed, DITHER_STREAM, trial, slot]))
    d = (rng.random(n) - rng.random(n)) * 2**-23

with ``slot`` the index of "A", "B", "X" in that order. The seed's own stream
``numpy.random.default_rng(seed)`` (the trial draws) is a different one.

What this does not hide: the decoded audio of X still equals one of A or B to
within the dither, so a listener who decodes the files and subtracts them
sample by sample, or measures their loudness, can still match X.
"""

from __future__ import annotations

import numpy as np

STEP_24_BIT = 2.0**-23  # one step of a 24-bit quantiser at full scale ±1 (two's complement: 2**23 steps per side)
DITHER_STREAM = 24  # our own tag, separating the dither's streams from the trial draws' default_rng(seed)
SLOT_ORDER = ("A", "B", "X")
RECIPE = "numpy.random.default_rng(numpy.random.SeedSequence([seed, 24, trial index, slot index (A 0, B 1, X 2)])): (random(n) - random(n)) * 2**-23, added before rounding to float32"


def tpdf_dither(frames: int, *, seed: int, trial: int, slot: str) -> np.ndarray:
    """TPDF dither spanning ±1 step of 24 bits, drawn for one clip slot of one trial.

    Parameters
    ----------
    frames : int
        Number of samples.
    seed : int, 0 .. 2**63 - 1
        The session's seed.
    trial : int
        The trial's index (0-based).
    slot : str
        "A", "B" or "X".

    Returns
    -------
    np.ndarray [shape=(frames,)], full scale ±1
        Values in (−2**-23, 2**-23), triangular density, mean 0, variance ``2**-46 / 6``.
    """
    if slot not in SLOT_ORDER:
        raise ValueError(f"slot={slot!r}: expected one of {', '.join(SLOT_ORDER)}")
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), DITHER_STREAM, int(trial), SLOT_ORDER.index(slot)]))
    return (rng.random(int(frames)) - rng.random(int(frames))) * STEP_24_BIT
