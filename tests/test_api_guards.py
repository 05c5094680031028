"""The public API refuses what the command line refuses, naming the Python argument.

No outside source: these tests hold the library to the project's own rule
(DEVELOPERS.md, "Files" and "Errors"): nothing is overwritten unless asked, and a
refused argument is one line naming it, before any work or any file is written.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import render

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"


def _earlier_run(folder: Path) -> Path:
    folder.mkdir()
    kept = folder / "studio-reference.wav"
    kept.write_bytes(b"an earlier run's clip")
    return kept


def test_render_clips_keeps_an_earlier_run_unless_told(tmp_path):
    out = tmp_path / "run"
    kept = _earlier_run(out)
    with pytest.raises(render.ArgumentError, match=r"^out=.*overwrite=True"):
        render.render_clips([REF], PHRASE, settings=render.RenderSettings(seconds=0.5), out=out, plots=False)
    assert kept.read_bytes() == b"an earlier run's clip" and sorted(p.name for p in out.iterdir()) == ["studio-reference.wav"]
    run = render.render_clips([REF], PHRASE, settings=render.RenderSettings(seconds=0.5), out=out, plots=False, overwrite=True)
    assert run.folder == out and kept.read_bytes() != b"an earlier run's clip"


def test_fit_keeps_an_earlier_run_unless_told(tmp_path):
    out = tmp_path / "fit"
    kept = _earlier_run(out)
    with pytest.raises(render.ArgumentError, match=r"^out=.*overwrite=True"):
        render.fit(FIT, out=out)
    assert kept.read_bytes() == b"an earlier run's clip" and sorted(p.name for p in out.iterdir()) == ["studio-reference.wav"]


def test_every_public_writer_takes_overwrite():
    # the public functions that write files: each refuses an existing output unless overwrite=True
    import inspect

    for name in ("render_clips", "fit", "fit_and_render", "unvoice", "build_blind_session", "score_blind_session"):
        p = inspect.signature(getattr(render, name)).parameters["overwrite"]
        assert p.kind is inspect.Parameter.KEYWORD_ONLY and p.default is False, name


def _refused(call, argument):
    """The one-line ArgumentError ``call`` raises, checked to name ``argument``."""
    with pytest.raises(render.ArgumentError) as e:
        call()
    assert e.value.argument == argument and str(e.value).startswith(f"{argument}=") and "\n" not in str(e.value)
    return str(e.value)


def test_bad_arguments_are_named(tmp_path):
    d = render.load_design(REF)
    s = render.RenderSettings(seconds=0.5)
    geometry = dict(positions=(0.1, 0.05), apertures=(0.01, 0.01), sample_rate=48000, seconds=0.1)
    _refused(lambda: render.render_clips([REF], PHRASE, settings=None, out=tmp_path / "a"), "settings")
    _refused(lambda: render.render_clips([REF], None, settings=s, out=tmp_path / "b"), "dry")
    _refused(lambda: render.render_clips([REF], tmp_path / "nope.toml", settings=s, out=tmp_path / "c"), "dry")
    _refused(lambda: render.render_clips([REF], PHRASE, settings=s, out=5), "out")
    _refused(lambda: render.load_phrase(5), "path")
    _refused(lambda: render.synthesize(5, **geometry), "phrase")
    _refused(lambda: render.hum(d, sources=3), "sources")
    _refused(lambda: render.hum(d, sources=[1]), "sources[0]")
    _refused(lambda: render.hum_tolerances(d, trials=0), "trials")
    _refused(lambda: render.hum_tolerances(d, trials=10, chunk=0), "chunk")
    _refused(lambda: render.bias_sweep(d, ratios=0.5), "ratios")
    _refused(lambda: render.noise(d, reference_velocity="0.1"), "reference_velocity")
    _refused(lambda: render.fit_coil(ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv", capacitance="95p"), "capacitance")
    _refused(lambda: d.with_geometry(coil_a=3), "coil_a")
    _refused(lambda: render.build_blind_session([d, d], None, out=tmp_path / "s", settings={"trials": 4}), "settings")
    assert not any(tmp_path.iterdir())  # nothing was written


def test_paths_as_str_or_path(tmp_path):
    kw = dict(positions=(0.1, 0.05), apertures=(0.01, 0.01), sample_rate=48000, seconds=0.1)
    a, b = render.synthesize(str(PHRASE), **kw), render.synthesize(render.load_phrase(PHRASE), **kw)
    assert (a.velocity == b.velocity).all()
    run = render.render_clips([REF], str(PHRASE), settings=render.RenderSettings(seconds=0.5), out=str(tmp_path / "r"), plots=False)
    assert run.folder == tmp_path / "r" and (tmp_path / "r" / "studio-reference.wav").is_file()


@pytest.mark.parametrize(
    "tolerances, argument",
    [
        ({"resistor": 5}, "tolerances['resistor']"),  # a percentage given where a fraction goes: ±500 %
        ({"resistor": -0.01}, "tolerances['resistor']"),
        ({"resistr": 0.01}, "tolerances"),  # a misspelt class is refused, not left out
        ([0.01], "tolerances"),
    ],
)
def test_tolerances_are_refused_as_the_command_refuses_them(tolerances, argument):
    from render.analysis.hum import TOLERANCE_RANGE

    d = render.load_design(REF)
    for call in (lambda: render.hum_tolerances(d, tolerances=tolerances, trials=10), lambda: render.hum_positions(d, joint=True, tolerances=tolerances, trials=10)):
        message = _refused(call, argument)
        if argument != "tolerances":
            assert TOLERANCE_RANGE in message  # the words `render hum --tolerance-resistor 80%` prints
    assert "did you mean 'resistor'" in _refused(lambda: render.hum_tolerances(d, tolerances={"resistr": 0.01}, trials=10), "tolerances")
    assert render.hum_tolerances(d, tolerances={"resistor": 0.5}, trials=10).trials == 10  # 50 % is the edge, accepted


def _python_words(call, argument):
    """The refusal names the Python argument and no command-line option; returns the error."""
    with pytest.raises(render.ArgumentError) as e:
        call()
    assert e.value.argument == argument and str(e.value).startswith(f"{argument}=") and " --" not in str(e.value), str(e.value)
    return e.value


def test_python_errors_name_python_arguments(tmp_path):
    d = render.load_design(REF)
    e = _python_words(lambda: render.bias_sweep(d, tops=(1e5,)), "tops")
    assert e.for_option() == "--top and --bottom go together: give both lists, of the same length"  # the command's words, as before
    e = _python_words(lambda: render.bias_sweep(d, tops=(1e5, 2e5), bottoms=(1e5,)), "bottoms")
    assert e.for_option() == "--top=100000,200000, --bottom=100000: need lists of equal length of resistances from 1 Ω to 1 GΩ"
    assert _python_words(lambda: render.bias_sweep(d, sine_velocity=1e9), "sine_velocity").for_option().startswith("--sine-velocity=")
    taken = tmp_path / "v.wav"
    taken.write_bytes(b"an earlier velocity")
    e = _python_words(lambda: render.unvoice(tmp_path / "di.wav", d, out=taken), "out")
    assert "overwrite=True" in str(e) and e.for_option() == f"{taken}: exists; pass --overwrite to replace it or choose another name"
    for argument, option, value in (("max_boost_db", "--max-boost", 100.0), ("volts_full_scale", "--volts-full-scale", 0.0), ("velocity_scale", "--velocity-scale", -1.0)):
        e = _python_words(lambda: render.unvoice(tmp_path / "di.wav", d, out=tmp_path / "w.wav", **{argument: value}), argument)
        assert e.for_option().startswith(f"{option}={value}: ")
    e = _python_words(lambda: render.score_blind_session(tmp_path / "nowhere"), "session")
    assert e.for_option() == f"SESSION={tmp_path / 'nowhere'}: no such folder; make a session with `render blind MODEL_A MODEL_B`"
    assert taken.read_bytes() == b"an earlier velocity" and sorted(p.name for p in tmp_path.iterdir()) == ["v.wav"]


@pytest.mark.parametrize(
    "field, value",
    [
        ("sample_rate", 7),
        ("seconds", -1.0),
        ("seed", -3),
        ("velocity_scale", 0.0),
        ("hum", "yes"),
        ("strength", 1.0),  # 1 m: metres given where the command line's millimetres were meant
    ],
)
def test_render_settings_refuse_what_no_render_can_use(field, value):
    _python_words(lambda: render.RenderSettings(**{field: value}), field)


def test_settings_that_do_not_fit_the_dry_file_are_refused_before_any_file(tmp_path):
    import numpy as np
    import soundfile as sf

    recording = tmp_path / "take.wav"
    sf.write(recording, np.zeros(4800), 48000, subtype="FLOAT")
    out = tmp_path / "run"
    e = _python_words(lambda: render.render_clips([REF], recording, settings=render.RenderSettings(strength=0.002), out=out), "strength")
    assert "scale a recording with RenderSettings.velocity_scale" in str(e)
    e = _python_words(lambda: render.render_clips([REF], PHRASE, settings=render.RenderSettings(velocity_scale=2.0), out=out), "velocity_scale")
    assert "RenderSettings.strength" in str(e) and "--strength" in e.for_option()
    _python_words(lambda: render.render_clips([REF], PHRASE, settings=render.RenderSettings(seconds=1e6), out=out), "seconds")
    assert not out.exists()


def test_fit_names_top(tmp_path):
    for call in (lambda: render.fit(FIT, out=tmp_path / "f", top=0), lambda: render.fit_and_render(FIT, out=tmp_path / "g", top=0)):
        assert "at least 1" in _refused(call, "top")
    assert not any(tmp_path.iterdir())  # refused before the folder was made


def test_result_arrays_are_read_only():
    # a result's arrays cannot be changed under the figures derived from them (or a grid later results share)
    import numpy as np

    d = render.load_design(REF)
    r = render.response(d, [1000.0, 2000.0])
    before = r.magnitude_db.copy()
    with pytest.raises(ValueError, match="read-only"):
        r.velocity[0] = 0
    assert np.array_equal(r.magnitude_db, before)
    n = render.noise(d)
    dry = render.synthesize(PHRASE, positions=(0.1, 0.05), apertures=(0.01, 0.01), sample_rate=48000, seconds=0.2)
    clip = render.render_clip(d, dry)
    m = render.hum_map(d, distances_m=(0.5,), bearings_deg=(0,))
    t = render.hum_tolerances(d, trials=10)
    p = render.hum_positions(d, trials=10)
    for a in (
        r.frequency_hz,
        r.passive,
        r.output_impedance,
        n.active.frequency_hz,
        n.active.density_v_per_rthz,
        dry.velocity,
        clip.volts,
        m.rejection_db,
        m.frequency_hz,
        t.rejection_db,
        p.rejection_db,
    ):
        assert not a.flags.writeable
    assert all(not a.flags.writeable for a in n.active.contributor_density.values())
    assert render.noise(d).active.total_v == n.active.total_v


def test_the_arrays_a_caller_passes_in_stay_theirs():
    # a result holds a read-only view: the caller's own grid and velocity stay writable
    import numpy as np

    d = render.load_design(REF)
    f = np.array([1000.0, 2000.0])
    r = render.response(d, f)
    assert f.flags.writeable and not r.frequency_hz.flags.writeable
    f[0] = 500.0  # the caller's array: allowed
    v = np.zeros((2, 4800))
    dry = render.Dry(velocity=v, sample_rate=48000)
    v[0, 0] = 1.0
    assert not dry.velocity.flags.writeable


def test_a_clip_is_as_long_as_the_shortest_phrase_or_recording_at_least():
    """One minimum length for a phrase, a recording and a clip's ``seconds`` (a pluck's first periods; common practice, no source)."""
    from render.dry.phrase import MIN_SECONDS

    with pytest.raises(render.ArgumentError, match=r"seconds=0.01"):
        render.RenderSettings(seconds=0.01)
    render.RenderSettings(seconds=MIN_SECONDS)


@pytest.mark.parametrize(
    "call, argument, near",
    [
        (lambda d: render.hum_map(d, distances_m=(0.001, 0.5), bearings_deg=(0.0,)), r"distances_m=0.001: the map's place at 0.001 m, bearing 0°, is", "0.8 cm from coil_b"),
        (lambda d: render.hum_positions(d, trials=10, shell=(0.05, 1.0)), r"shell=\(0.05, 1\): the shell's nearest places are", "4.1 cm from coil_a"),
        # 10.5 cm from the midpoint is 9.6 cm from the nearer coil (the coils sit 18 mm apart): refused as a source there is
        (lambda d: render.hum_map(d, distances_m=(0.105, 0.5)), r"distances_m=0.105: the map's place at 0.105 m, bearing 180°, is", "9.6 cm from coil_a"),
        (lambda d: render.hum_positions(d, trials=10, shell=(0.105, 1.0)), r"shell=\(0.105, 1\): the shell's nearest places are", "9.6 cm from coil_a"),
        (lambda d: render.hum_positions(d, trials=10, shell=np.array([0.105, 1.0])), r"shell=\(0.105, 1\): the shell's nearest places are", "9.6 cm from coil_a"),  # an array as a tuple
    ],
)
def test_a_dipole_nearer_than_a_hum_source_may_sit_is_refused_from_python_too(call, argument, near):
    """The map and the random places keep the rig file's rule, coil by coil: no point dipole within 10 cm of either
    coil's centre (common practice, no source), in the words a [[hum.source]] gets, with the fix: 10 cm plus the
    coils' half spacing from the midpoint (0.1 + 0.009 m)."""
    with pytest.raises(render.ArgumentError, match=argument + " " + near + r"'s centre, closer than 10 cm: a point dipole there stands for no real source .* 0.109 m or more$"):
        call(render.load_design(ROOT / "models" / "studio-reference.toml"))


def test_a_map_and_a_shell_clear_of_both_coils_are_accepted():
    d = render.load_design(ROOT / "models" / "studio-reference.toml")
    assert render.hum_map(d, distances_m=(0.109, 0.5)).rejection_db.shape[0] == 2
    assert render.hum_positions(d, trials=10, shell=np.array([0.11, 1.0])).trials == 10


def test_a_result_keeps_its_figures_when_the_caller_changes_the_array_passed_in():
    # the result holds its own read-only copy: the caller's grid stays theirs to change, and changing it changes nothing in the result
    d = render.load_design(REF)
    f = np.array([100.0, 1000.0])
    r = render.response(d, f)
    before = r.magnitude_db.copy()
    f[0] = 5000.0
    assert list(r.frequency_hz) == [100.0, 1000.0] and np.array_equal(r.magnitude_db, before)
    distances = np.array([0.5, 1.0])
    m = render.hum_map(d, distances_m=distances, bearings_deg=(0.0,))
    distances[0] = 7.0
    assert list(m.distance_m) == [0.5, 1.0]
    v = np.zeros((2, 4800))
    dry = render.Dry(velocity=v, sample_rate=48000)
    v[0, 0] = 1.0
    assert dry.velocity[0, 0] == 0.0
    shared = render.Dry(velocity=dry.velocity, sample_rate=48000)  # an array nobody can write into is shared, not copied
    assert shared.velocity is dry.velocity


@pytest.mark.parametrize(
    "velocity, sample_rate, argument, words",
    [
        (np.zeros((2, 5)), -1, "sample_rate", "must be from 8000 to 384000 Hz"),  # rendered, it ran for more than a minute
        (np.zeros((2, 5)), 48000.7, "sample_rate", "a whole number"),
        (np.zeros((2, 5)), "abc", "sample_rate", "a whole number"),
        (np.full((2, 5), np.nan), 48000, "velocity", "NaN or infinite samples (the first at sample 0)"),
        (np.zeros((3, 5)), 48000, "velocity", "give shape (2, n)"),
        (np.zeros(5), 48000, "velocity", "np.vstack([v, v])"),
        (np.zeros((2, 5), dtype=complex), 48000, "velocity", "complex samples"),
        ("abc", 48000, "velocity", "not an array of real numbers"),
    ],
)
def test_a_dry_signal_is_checked_when_made(velocity, sample_rate, argument, words):
    assert words in _refused(lambda: render.Dry(velocity=velocity, sample_rate=sample_rate), argument)


def test_render_clip_checks_a_sample_rate_and_velocity_alike_with_a_dry_or_an_array():
    # one check of a sample rate (render.validate.sample_rate) for both: a whole number from 8000 to 384000 Hz
    d = render.load_design(REF)
    dry = render.Dry(velocity=np.zeros((2, 480)), sample_rate=48000)
    for rate in (48000.7, "abc", float("nan"), 7999.0):
        a = _refused(lambda: render.render_clip(d, dry, sample_rate=rate), "sample_rate")
        b = _refused(lambda: render.render_clip(d, np.zeros(480), sample_rate=rate), "sample_rate")
        assert a == b
    for rate in (48000.0, np.float32(48000)):  # a float with no fraction is that whole number (numpy's too)
        assert render.render_clip(d, dry, sample_rate=rate).sample_rate == 48000
        assert render.render_clip(d, np.zeros(480), sample_rate=rate).sample_rate == 48000
    assert "the dry signal is at 48000 Hz" in _refused(lambda: render.render_clip(d, dry, sample_rate=44100), "sample_rate")
    assert render.render_clip(d, dry, sample_rate=48000).sample_rate == 48000
    _refused(lambda: render.render_clip(d, np.zeros(480), sample_rate=None), "sample_rate")
    assert "complex samples" in _refused(lambda: render.render_clip(d, np.zeros(480) + 1j, sample_rate=48000), "velocity")
    assert "NaN" in _refused(lambda: render.render_clip(d, np.full(480, np.inf), sample_rate=48000), "velocity")


@pytest.mark.parametrize("seed", [-1, 1.5, "3", True, 2**32])
def test_seeds_are_whole_numbers_everywhere(seed, tmp_path):
    # the range of every --seed (render.option_checks.SEED_MAX: 0 .. 2**32-1, what scipy's optimisers take)
    d = render.load_design(REF)
    for call in (
        lambda: render.hum_tolerances(d, trials=10, seed=seed),
        lambda: render.hum_positions(d, trials=10, seed=seed),
        lambda: render.hum_positions(d, trials=10, seed=seed, joint=True),
        lambda: render.render_clip(d, np.zeros(480), sample_rate=48000, seed=seed),  # noise=False: refused all the same
        lambda: render.synthesize(PHRASE, positions=(0.1, 0.05), apertures=0.01, sample_rate=48000, seed=seed),
        lambda: render.RenderSettings(seed=seed),
        lambda: render.fit(FIT, out=tmp_path / "f", seed=seed),
        lambda: render.fit_and_render(FIT, out=tmp_path / "g", seed=seed),
    ):
        assert "from 0 to 4294967295" in _refused(call, "seed")
    assert not any(tmp_path.iterdir())  # refused before any folder was made


def test_trials_are_whole_numbers_for_both_monte_carlos():
    d = render.load_design(REF)
    for trials in (1.5, 0, "10"):
        a = _refused(lambda: render.hum_tolerances(d, trials=trials), "trials")
        assert a == _refused(lambda: render.hum_positions(d, trials=trials), "trials")
    _refused(lambda: render.hum_positions(d, trials=10, joint="yes"), "joint")


def test_switches_and_map_axes_are_named_as_python_names_them():
    d = render.load_design(REF)
    assert "pass True or False" in _refused(lambda: render.bias_sweep(d, keep_load="no"), "keep_load")
    for distances in (0.5, (), (0.5, -1.0), np.array([0.5, np.nan])):
        assert _refused(lambda: render.hum_map(d, distances_m=distances), "distances_m").endswith("must be a sequence of positive distances in m, e.g. (0.5, 1.0)")
    assert _refused(lambda: render.hum_map(d, distances_m=0.5), "distances_m").startswith("distances_m=0.5: ")
    assert "sequence of finite bearings" in _refused(lambda: render.hum_map(d, bearings_deg=90), "bearings_deg")
    _refused(lambda: render.hum_map(d, plane="yz"), "plane")


@pytest.mark.parametrize(
    "frequency_hz, words",
    [([1000 + 1j], "not numbers"), ([[100.0, 200.0]], "shape (1, 2)"), ([100.0, float("nan")], "NaN among"), ([0.0], "0 Hz among"), ("abc", "not numbers")],
)
def test_response_refuses_frequencies_that_are_not_positive_real_numbers(frequency_hz, words):
    # a complex frequency used to pass with only numpy's ComplexWarning, its imaginary part dropped
    import warnings

    d = render.load_design(REF)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning instead of the refusal fails here
        with pytest.raises(render.InputError) as e:
            render.response(d, frequency_hz)
    assert str(e.value).startswith("frequency_hz") and words in str(e.value) and "\n" not in str(e.value)
