"""Diffraction: the Airy disk that stopping down spreads every point into."""

from __future__ import annotations

from sharpzone.optics._checks import all_scalar, as_array, require, scalar_or_array

# Mid-spectrum green, where the eye is most sensitive: 550 nm (common practice).
GREEN_WAVELENGTH_MM = 550e-6
# Diameter of the Airy disk to its first dark ring: 2 × 1.22 λ N (D. Jacobson,
# "Photographic Lenses Tutorial", section 05: first zero at radius 1.22 λ N).
AIRY_DIAMETER_FACTOR = 2.44


def airy_disk_diameter_mm(effective_f_number, wavelength_mm=GREEN_WAVELENGTH_MM):
    """Airy disk diameter 2.44 λ N in mm; use the effective f-number in close-up work."""
    scalar = all_scalar(effective_f_number, wavelength_mm)
    n = as_array(effective_f_number, "f-number")
    lam = as_array(wavelength_mm, "wavelength")
    require(n, n > 0, "f-number {value:g} is not valid: expected above 0")
    require(lam, lam > 0, "wavelength {value:g} mm is not valid: expected above 0 mm")
    return scalar_or_array(AIRY_DIAMETER_FACTOR * lam * n, scalar)


def diffraction_limited_f_number(coc_mm, wavelength_mm=GREEN_WAVELENGTH_MM):
    """The f-number at which the Airy disk grows as wide as the circle of confusion.

    Past it, stopping down adds depth on paper but softens the plane of focus itself.
    N = c / (2.44 λ): f/22.4 for c = 0.030 mm at 550 nm.
    """
    scalar = all_scalar(coc_mm, wavelength_mm)
    c = as_array(coc_mm, "circle of confusion")
    lam = as_array(wavelength_mm, "wavelength")
    require(c, c > 0, "circle of confusion {value:g} mm is not valid: expected above 0 mm")
    return scalar_or_array(c / (AIRY_DIAMETER_FACTOR * lam), scalar)
