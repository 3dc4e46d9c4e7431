"""The numbers every layer agrees on about lenses and formats, each with its reason.

One home for each: the optics core, the catalogue's rules and defaults, ingest and the
checks all import them from here (a light module: no numpy).
"""

from __future__ import annotations

# The smallest f-number a lens in air can have: N = 1 / (2 NA) with numerical aperture
# NA <= 1 (encyclopedia article "F-number", section on numerical aperture). Every
# photographic lens made lies above it; anything below is a damaged record.
MIN_F_NUMBER = 0.5

# The default circle of confusion of a format: 1/1500 of the image diagonal (R. F. Lyon,
# "Depth of Field Outside the Box", 2006; a lens maker's newsletter "Depth of field - an
# insider's look behind the scenes", 2007).
DIAGONAL_DIVISOR = 1500.0

# The narrowest aperture assumed when a lens's minimum aperture is not known: most
# interchangeable lenses stop down to f/22 (common practice).
ASSUMED_MIN_APERTURE = 22.0
