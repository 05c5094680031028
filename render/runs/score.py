"""``render score`` as a run: the score of a finished blind session and its response-difference plot.

The score itself is :func:`render.listening.score.score_session` (it refuses,
revealing nothing, before the last trial is answered); the plot is
:func:`render.listening.score.difference_plot`, by default at
``SESSION/results/response-difference.png``, where an earlier plot is kept
unless ``overwrite``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from ..errors import ArgumentError, InputError
from ..listening.layout import SessionPaths

PLOT_NAME = "response-difference.png"  # in SESSION/results/


@dataclass(frozen=True)
class SessionScore:
    """What :func:`score_blind_session` found and drew.

    Attributes
    ----------
    paths : SessionPaths
    session_id : str
        The session's random id (as in its plan and key).
    result : dict
        The JSON-ready score (:func:`render.listening.score.score`): method,
        designs, the per-trial table and the test.
    plot : Path or None
        The response-difference plot drawn by this run.
    kept_plot : Path or None
        The session's earlier plot, left as it was (no ``overwrite``).
    warnings : tuple of str
        One line each: a measured coil's file gone or changed since the session was rendered (its
        SHA-256 differs from the key's), or a plot that could not be drawn.
    """

    paths: SessionPaths
    session_id: str
    result: dict
    plot: Path | None = None
    kept_plot: Path | None = None
    warnings: tuple[str, ...] = ()


def score_blind_session(session: str | Path, *, png_path: str | Path | None = None, plot: bool = True, overwrite: bool = False) -> SessionScore:
    """Score the finished session at ``session`` and draw its response difference.

    Parameters
    ----------
    session : str or Path
        The session folder.
    png_path : str, Path or None
        Where to draw the plot (default ``SESSION/results/response-difference.png``,
        kept if it exists and ``overwrite`` is false).
    plot : bool
        Draw the plot at all.
    overwrite : bool
        Replace an existing plot (a ``png_path`` that exists is refused without it).

    Returns
    -------
    SessionScore
    """
    from ..listening.score import changed_measurements, designs_from_key, difference_plot, score_session

    paths, key, result = score_session(session)
    warnings = tuple(changed_measurements(key, plotted=plot))
    drawn = kept = None
    if plot:
        target = Path(png_path) if png_path else paths.results / PLOT_NAME
        if png_path is None and target.exists() and not overwrite:
            kept = target
        else:
            try:
                target.parent.mkdir(exist_ok=True)
            except OSError as exc:
                raise ArgumentError("png", f"{target}", f"cannot create the folder {target.parent} ({exc.strerror or exc}); choose another path") from None
            try:
                designs = designs_from_key(key)
            except InputError as exc:  # a design the key keeps no longer loads here (a measurement moved): the score stands
                warnings += (f"the response difference was not drawn: {exc}",)
            else:  # a plot that cannot be written is refused, as every output is
                drawn = difference_plot(target, key, overwrite=overwrite, designs=designs)
    return SessionScore(paths=paths, session_id=key["session"], result=result, plot=drawn, kept_plot=kept, warnings=warnings)
