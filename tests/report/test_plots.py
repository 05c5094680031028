"""Plots drawn on kept figures, the spectrogram's image, and how a run is split into batches.

No check values that need a source: the references are the same computation done
plainly (new figures; numpy's rfft and np.interp column by column), with 1e-9 dB
for float rounding; the batch length of at most five and the sizes asserted are
this project's own choices (see render.runs.clips.split_runs).
"""

from __future__ import annotations

import numpy as np
import pytest

from render.parallel import SideProcess
from render.report import plots
from render.runs.clips import split_runs

F = np.geomspace(20, 20000, 600)


def _design_like(k):
    """Made-up responses and signals (test data only): a resonant low-pass moved about with k."""
    h = (1 + k) / (1 + 1j * F / (3000 + 1000 * k) - (F / (4000 + 500 * k)) ** 2)
    x = np.random.default_rng(k).standard_normal(8000 * (2 + k)) * (1 + k)
    ff = np.fft.rfftfreq(4096, 1 / 48000)
    lv = -60 - 10 * np.log10(1 + ff / (100 * (k + 1)))
    return h, x, ff, lv


def _draw_all(folder, kept_figures):
    folder.mkdir()
    for k in range(3):
        h, x, ff, lv = _design_like(k)
        plots.response_plot(folder / f"{k}-r.png", F, [(f"design {k}" * (k + 1), h)], passive=("passive reference", 0.7 * h), title=f"design {k}", overwrite=True, kept=kept_figures)
        plots.spectrum_plot(folder / f"{k}-s.png", [(f"design {k}", ff, lv + 3 * k, False), ("passive reference", ff, lv - 3, True)], title=f"spectrum {k}", overwrite=True, kept=kept_figures)
        plots.spectrogram_plot(folder / f"{k}-g.png", x, sample_rate=16000 * (1 + k % 2), title=f"spectrogram {k}", overwrite=True, kept=kept_figures)
    return {p.name: p.read_bytes() for p in folder.iterdir()}


def test_a_plot_on_a_kept_figure_is_the_same_file_as_on_a_new_one(tmp_path):
    fresh = _draw_all(tmp_path / "fresh", None)
    with plots.KeptFigures() as figures:
        kept = _draw_all(tmp_path / "kept", figures)
    assert sorted(fresh) == sorted(kept) and len(fresh) == 9
    for name in fresh:
        assert fresh[name] == kept[name], name
    # and the plots do differ from one design to the next (so the comparison means something)
    assert fresh["0-r.png"] != fresh["1-r.png"] and fresh["0-g.png"] != fresh["2-g.png"]


def _spectrogram_by_columns(x, sample_rate):
    """The same image the plain way: scipy.signal.periodogram's one-sided density per column (DC and Nyquist
    counted once), np.interp of the dB levels onto the rows."""
    from scipy.signal import periodogram

    seg = 2048 if x.size >= 2048 else max(64, x.size)
    hop = max(seg // 4, -(-x.size // plots.MAX_COLUMNS))
    starts = np.arange(0, max(x.size - seg, 0) + 1, hop)
    w = np.hanning(seg + 1)[:-1]
    f = np.fft.rfftfreq(seg, 1 / sample_rate)
    rows = np.geomspace(40.0, min(20000.0, sample_rate / 2), 320)
    cols = []
    for s in starts:
        _, p = periodogram(x[s : s + seg], fs=sample_rate, window=w, detrend=False, scaling="density")
        cols.append(np.interp(rows, f, 10 * np.log10(np.maximum(p, 1e-30))))
    return np.array(cols).T


@pytest.mark.parametrize("n, fs", [(48000 * 3, 48000), (44100, 44100), (1000, 8000), (100, 8000), (96000, 96000), (10, 8000), (1, 48000)])
def test_spectrogram_image_matches_the_column_by_column_computation(n, fs):
    x = np.random.default_rng(n).standard_normal(n)
    img, (t0, t1), fmax, top = plots.spectrogram_image(x, sample_rate=fs)
    ref = _spectrogram_by_columns(np.concatenate([x, np.zeros(max(0, 64 - n))]), fs)  # shorter than a frame: zero-padded
    assert img.shape == ref.shape
    assert np.max(np.abs(img - ref)) < 1e-9
    assert fmax == min(20000.0, fs / 2) and top == pytest.approx(ref.max()) and 0 <= t0 <= t1 <= max(n, 64) / fs


@pytest.mark.parametrize("n, jobs", [(0, 2), (1, 2), (2, 2), (7, 2), (10, 1), (10, 2), (11, 2), (3, 8), (100, 2), (37, 4)])
def test_batches_cover_every_task_once_in_order_and_evenly(n, jobs):
    runs = split_runs(n, jobs)
    assert [i for r in runs for i in r] == list(range(n))
    if n:
        sizes = [len(r) for r in runs]
        assert max(sizes) <= 5 and max(sizes) - min(sizes) <= 1
        assert len(runs) % min(jobs, n) == 0  # a whole number of runs per process


@pytest.mark.parametrize("n, jobs", [(0, 2), (1, 2), (2, 2), (7, 2), (8, 2), (10, 1), (11, 4), (3, 8), (100, 2)])
def test_shrinking_runs_cover_every_task_once_in_order_and_shrink(n, jobs):
    # guided self-scheduling (Polychronopoulos & Kuck 1987): each run about the remaining tasks over the
    # processes, capped at 5, never empty, never growing
    from render.runs.clips import shrinking_runs

    runs = shrinking_runs(n, jobs)
    assert [i for r in runs for i in r] == list(range(n))
    sizes = [len(r) for r in runs]
    assert all(1 <= a <= 5 for a in sizes) and sizes == sorted(sizes, reverse=True)
    left = n
    for size in sizes:
        assert size == min(5, -(-left // jobs))
        left -= size
    if (n, jobs) == (8, 2):
        assert sizes == [4, 2, 1, 1]


def _square(x):
    return x * x


@pytest.mark.parametrize("enabled", [False, True])
def test_side_work_gives_the_same_results_in_a_process_or_here(enabled):
    with SideProcess(enabled=enabled) as side:
        futures = [side.submit(_square, k) for k in range(5)]
        assert [f.result() for f in futures] == [0, 1, 4, 9, 16]


def test_every_curve_of_a_crowded_plot_has_a_look_of_its_own():
    looks = [tuple(map(str, plots.curve_style(i).values())) for i in range(len(plots.PALETTE) * len(plots.STYLES))]
    assert len(set(looks)) == len(looks)
    passives = [str(plots.passive_style(j)["ls"]) for j in range(len(plots.PASSIVE_STYLES))]
    assert len(set(passives)) == len(passives)


def test_compound_units_are_bracketed_before_squaring():
    # the SI Brochure (BIPM, 9th ed., 5.4.6; from memory) reads a solidus algebraically: "m/s²" is m·s⁻², an
    # acceleration, so a velocity's power density is written (m/s)²/Hz
    assert plots.squared("V") == "V²" and plots.squared("m/s") == "(m/s)²" and plots.squared("V·s/m") == "(V·s/m)²"


def test_a_silent_signal_is_drawn_as_silent(tmp_path):
    # all zeros: spectrogram_image's floor (1e-30, -300 dB) everywhere; drawn on a scale of its own it would look loud
    x = np.zeros(48000)
    p = plots._spectrogram_build(20000.0, "m/s", "quiet")
    plots._spectrogram_fill(p, plots.spectrogram_image(x, sample_rate=48000), "quiet", "silent: the peak is below 1e-12 m/s")
    assert p["title"].get_text() == "quiet (silent)" and p["note"].get_text().startswith("silent")
    assert np.all(np.isnan(np.ma.getdata(p["mesh"].get_array())))
    assert plots.silent(x) and plots.silent(np.full(10, 9e-13)) and not plots.silent(np.full(10, 1e-12)) and plots.silent([])
    # and the file says it: a kept figure drawn silent, then loud, is the same file as a new one each time
    loud = np.random.default_rng(0).standard_normal(48000)
    with plots.KeptFigures() as kept:
        plots.spectrogram_plot(tmp_path / "a.png", x, sample_rate=48000, title="t", unit="m/s", kept=kept)
        plots.spectrogram_plot(tmp_path / "b.png", loud, sample_rate=48000, title="t", unit="m/s", kept=kept)
    plots.spectrogram_plot(tmp_path / "c.png", x, sample_rate=48000, title="t", unit="m/s")
    plots.spectrogram_plot(tmp_path / "d.png", loud, sample_rate=48000, title="t", unit="m/s")
    assert (tmp_path / "a.png").read_bytes() == (tmp_path / "c.png").read_bytes()
    assert (tmp_path / "b.png").read_bytes() == (tmp_path / "d.png").read_bytes() != (tmp_path / "a.png").read_bytes()


def test_a_point_below_the_floor_is_drawn_at_the_floor_not_hidden():
    # made-up harmonic levels (test data only): one point far below the -100 dB floor, one series with a gap
    x = [0.3, 0.4, 0.5, 0.6]
    fig = plots.lines_figure(x, [("H2", [-20.0, -40.0, -108.5, -45.0], False), ("H3", [-30.0, float("nan"), -35.0, -31.0], True)], xlabel="x", ylabel="dB", floor=-100.0)
    ax = fig.axes[0]
    assert ax.get_ylim()[0] == -100.0
    triangles = [ln for ln in ax.get_lines() if ln.get_marker() == "v"]
    assert len(triangles) == 1
    assert list(triangles[0].get_xdata()) == [0.5] and list(triangles[0].get_ydata()) == [-100.0]
    assert any("below -100" in t.get_text() for t in ax.get_legend().get_texts())
    # nothing drawn below the axis, and the points above the floor keep their values
    h2 = next(ln for ln in ax.get_lines() if ln.get_label() == "H2")
    assert list(h2.get_ydata()) == [-20.0, -40.0, -100.0, -45.0]
    # without a point below the floor, nothing is marked and the axis is left to autoscale
    fig = plots.lines_figure(x, [("H2", [-20.0, -40.0, -60.0, -45.0], False)], xlabel="x", ylabel="dB", floor=-100.0)
    assert not [ln for ln in fig.axes[0].get_lines() if ln.get_marker() == "v"] and fig.axes[0].get_ylim()[0] > -100.0
