"""The spectral windows are computed with numpy (no scipy.signal at start-up); they must
be the periodic windows of scipy.signal, an independent implementation, bit for bit."""

import numpy as np
import pytest
from scipy.signal import windows as reference

from tdse1d.spectra.windows import Blackman, Hann, Tukey


@pytest.mark.parametrize("n", [0, 1, 2, 3, 8, 101, 4096])
def test_windows_equal_scipy_signal(n):
    assert np.array_equal(Hann().weights(n), reference.hann(n, sym=False))
    assert np.array_equal(Blackman().weights(n), np.clip(reference.blackman(n, sym=False), 0.0, 1.0))
    for taper in (0.0, 0.1, 0.5, 1.0):
        assert np.array_equal(Tukey(taper).weights(n), reference.tukey(n, alpha=taper, sym=False))


def test_null_a_symmetric_window_is_not_the_periodic_one():
    # null case: the symmetric Hann window (sym=True) differs, so the equality above
    # does distinguish the DFT-even convention
    assert not np.allclose(Hann().weights(64), reference.hann(64, sym=True))
