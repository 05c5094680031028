"""Phrase synthesis that keeps each note's contribution, for re-rendering while a phrase is edited.

A phrase's string velocity is a sum over its notes (:mod:`render.dry.modal`):
each note's term depends only on the note, the instrument, its onset and
end, its jittered strength and pluck point, the sensing points and the
length. :class:`NoteCache` computes :func:`render.dry.modal.string_velocity`
the same way, note by note in the same order (so the sums are the same
floating-point additions and the result the same bits), but keeps every
note's term under those arguments. Editing one note of a phrase then
synthesises that note again (and the note before it on the same string,
whose end moved), not the whole phrase.

The cache holds the terms of the last calls only: :meth:`NoteCache.prune`
drops those the calls since the previous prune did not use.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from . import Dry
from .modal import _add_note, _check_points, one_blas_thread, plucks
from .phrase import Phrase


class NoteCache:
    """Each note's term of a phrase's string velocity, kept between calls (see the module docstring)."""

    def __init__(self) -> None:
        self._terms: dict[tuple, tuple[int, np.ndarray] | None] = {}
        self._used: set[tuple] = set()
        self.computed = 0  # notes synthesised (not found) since the last prune
        self.reused = 0

    def string_velocity(self, phrase: Phrase, *, sample_rate: int, positions, apertures, seed: int = 0, seconds: float | None = None) -> np.ndarray:
        """As :func:`render.dry.modal.string_velocity` (same arguments, same result to the bit)."""
        inst = phrase.instrument
        x, w = _check_points(positions, apertures, inst.scale_length)
        p = plucks(phrase, sample_rate=sample_rate, seed=seed, seconds=seconds)
        n_total = p.n_total
        out = np.zeros((x.size, n_total))
        for note, args in p.notes:
            key = (replace(note, origin=""), inst, n_total, tuple(x), tuple(w), tuple(sorted(args.items())))
            self._used.add(key)
            if key not in self._terms:
                self._terms[key] = self._term(note, inst, n_total, x, w, args)
                self.computed += 1
            else:
                self.reused += 1
            term = self._terms[key]
            if term is not None:
                i0, buf = term
                out[:, i0 : i0 + buf.shape[1]] += buf
        return out

    @staticmethod
    def _term(note, inst, n_total: int, x: np.ndarray, w: np.ndarray, args: dict) -> tuple[int, np.ndarray] | None:
        """One note's term alone: (first sample, samples (P, span)), or None when it adds nothing."""
        alone = np.zeros((x.size, n_total))
        _add_note(alone, note, inst, positions=x, apertures=w, **args)
        hit = np.flatnonzero(np.any(alone != 0.0, axis=0))
        if not hit.size:
            return None
        return int(hit[0]), alone[:, hit[0] : hit[-1] + 1].copy()

    @one_blas_thread  # as render.dry.synthesize: the same bits on any machine
    def synthesize(self, phrase: Phrase, *, positions, apertures, sample_rate: int, seed: int = 0, seconds: float | None = None) -> Dry:
        """As :func:`render.dry.synthesize`, through the cache."""
        from . import phrase_dry

        velocity = self.string_velocity(phrase, sample_rate=sample_rate, positions=positions, apertures=apertures, seed=seed, seconds=seconds)
        return phrase_dry(phrase, velocity, positions=positions, sample_rate=sample_rate, seed=seed)

    def prune(self) -> None:
        """Forget the terms the calls since the last prune did not use."""
        self._terms = {k: v for k, v in self._terms.items() if k in self._used}
        self._used = set()
        self.computed = self.reused = 0
