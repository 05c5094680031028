"""Third-octave band levels of a one-sided density (render unvoice's JSON ``bands``).

IEC 61260-1 (base 10): the band around centre c spans c·10^(±1/20). A flat one-sided density D
(u²/Hz) holds D times the band's width in it, c·(10^0.05 − 10^−0.05) (arithmetic), whatever the
spectrum's bin width: bands narrower than a bin included.
"""

import numpy as np
import pytest

from render.analysis.unvoice import band_levels_from_psd, third_octave_centres


@pytest.mark.parametrize("df", [0.5, 21.533203125, 43.06640625])  # 21.5 Hz: 2048 bins at 44.1 kHz
def test_a_flat_density_gives_each_band_its_width(df):
    f = np.arange(0, 22050, df)
    density = 1e-6
    centres = third_octave_centres(20.0, 16000.0)
    got = band_levels_from_psd(np.full(f.size, density), frequency_hz=f, centres_hz=centres)
    want = 10 * np.log10(density * centres * (10**0.05 - 10**-0.05))
    np.testing.assert_allclose(got, want, atol=1e-9)
