"""The band palette must stay in order when printed in greyscale."""

import numpy as np

from siting.export.palette import BANDS, band_colours, relative_luminance


def test_relative_luminance_reference_values():
    # IEC 61966-2-1 (sRGB) / WCAG 2.x definition of relative luminance: white 1, black 0,
    # pure sRGB green 0.7152 (the Y coefficient of the primary).
    assert relative_luminance("#ffffff") == 1.0
    assert relative_luminance("#000000") == 0.0
    assert abs(relative_luminance("#00ff00") - 0.7152) < 1e-12


def test_bands_darken_monotonically():
    lum = np.array([relative_luminance(c) for c in BANDS])
    assert np.all(np.diff(lum) < 0)
    # neighbouring bands differ enough to tell apart on a grey print (common practice:
    # a luminance step of a few percent of full scale is visible)
    assert np.min(-np.diff(lum)) > 0.02


def test_band_colours_keep_order_for_any_count():
    for n in range(1, 12):
        cols = band_colours(n)
        assert len(cols) == n
        lum = [relative_luminance(c) for c in cols]
        assert all(a >= b for a, b in zip(lum, lum[1:], strict=False))
