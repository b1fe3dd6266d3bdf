"""Turn a raw FID or stored spectrum into a phased, baselined, referenced 1H spectrum.

The steps, each overridable through :class:`ProcessingOptions`:

1. orientation of the imaginary channel from the file's metadata (format convention, reverse
   flags, page labels: :mod:`confirm.reading`);
2. digital-filter group delay removed as an exact time shift (FFT phase ramp),
   the wrapped points at the end of the FID set to zero;
3. DC offset (mean of the last 10 % of the FID) subtracted, first point halved;
4. exponential apodization (``lb_hz``, default 0.3 Hz);
5. zero filling to the next power of two of ``zero_fill_factor`` x points;
6. FFT, axis in ppm from the carrier, ppm decreasing;
7. automatic zero- and first-order phasing by minimising the entropy of the
   spectrum's first derivative with a penalty on negative intensity (Chen,
   Weng, Goh, Garland, J. Magn. Reson. 2002, 158, 164);
8. baseline by asymmetrically reweighted penalised least squares (Baek et al.,
   Analyst 2015, 140, 250; the asymmetric least squares family of Eilers and
   Boelens 2005), fitted on a block-averaged copy;
9. the orientation checked against the data (:mod:`~confirm.processing.referencing`): the
   data may confirm it, and overrule it only with two independent lines of evidence;
10. referencing by validated patterns (:mod:`~confirm.processing.patterns`): TMS with its 29Si
    satellites, else the residual line of the solvent the data support, else TMS anywhere on
    the axis, else as acquired with the offset the nearest candidate would imply;
11. noise, SNR, peaks, integrals and multiplets (:mod:`confirm.peaks`).

SNR definition (also written into the metadata and the JSON output): the
height of the tallest line that is not solvent, water or TMS, divided by two
times the noise standard deviation; the noise standard deviation is the lower
quartile of the standard deviations of 64 equal blocks of the spectrum, each
after removing a straight line (blocks holding lines are thereby ignored).
"""

from confirm.processing.baseline import arpls_baseline, estimate_noise_sd
from confirm.processing.options import SNR_DEFINITION, ProcessedSpectrum, ProcessingOptions
from confirm.processing.pipeline import load_spectrum, process_measurement, resolve_field
from confirm.processing.transform import apply_phase, apply_phase_at, find_phase

__all__ = [
    "ProcessingOptions",
    "ProcessedSpectrum",
    "SNR_DEFINITION",
    "process_measurement",
    "load_spectrum",
    "resolve_field",
    "apply_phase",
    "apply_phase_at",
    "find_phase",
    "estimate_noise_sd",
    "arpls_baseline",
]
