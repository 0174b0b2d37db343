"""The project's own sequential palette for field bands.

Lightness falls monotonically from the lowest band to the highest, so the
bands stay in order when printed in greyscale (checked in the tests through
the CIE relative luminance of each colour).
"""

from __future__ import annotations

#: Band fills, lowest level first: pale sand through ochre and rust to a deep
#: aubergine.  Relative luminance decreases strictly along the list.
BANDS = (
    "#f6f1e3",
    "#ecdcae",
    "#ddbb78",
    "#c9914a",
    "#ac6330",
    "#833b28",
    "#552126",
    "#2c1220",
)

LINE = "#1d1d1d"
ROOM_EDGE = "#2f4f6f"
FAIL = "#c0182b"
PASS = "#1f7a3a"


def band_colours(n: int) -> list[str]:
    """``n`` band colours spread over the palette, lowest first."""
    if n <= 0:
        return []
    if n >= len(BANDS):
        return [BANDS[min(i, len(BANDS) - 1)] for i in range(n)]
    step = (len(BANDS) - 1) / max(n - 1, 1)
    return [BANDS[round(i * step)] for i in range(n)]


def relative_luminance(hex_colour: str) -> float:
    """CIE relative luminance of an sRGB colour (IEC 61966-2-1 transfer curve)."""
    rgb = [int(hex_colour[i : i + 2], 16) / 255.0 for i in (1, 3, 5)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgb]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]
