"""Signals no candidate explains: residual peaks above the noise outside the masked windows."""

from __future__ import annotations

import numpy as np

__all__ = ["unexplained_signals"]

#: Smallest share of the fitted proton signal worth reporting.
_MIN_SHARE = 0.005


def unexplained_signals(spectrum, grid, model, masks, noise_sd: float, corr: float, total_area: float):
    """Residual peaks above the noise outside masks, as (ppm, share of proton signal) pairs.

    The model (drawn on the binned grid) is interpolated onto the spectrum's own axis and taken
    away; the residual is smoothed over ~0.5 Hz and its peaks above 8 noise sd are reported,
    except where they are the misfit of a modelled multiplet (model there at least half as tall).
    """
    ppm = np.asarray(spectrum.ppm)[::-1]
    y = np.asarray(spectrum.intensity, dtype=float)[::-1]
    field = float(spectrum.field_mhz)
    hz = abs(spectrum.hz_per_point)
    sel = (ppm >= grid.x.min()) & (ppm <= grid.x.max())
    model_at = np.zeros(y.size)
    model_at[sel] = np.interp(ppm[sel], grid.x, model)
    resid = y - model_at
    for a, b, _ in masks:
        resid[(ppm >= a) & (ppm <= b)] = 0.0
    width = max(3, int(round(0.5 / hz)))
    smooth = np.convolve(resid, np.ones(width) / width, mode="same")
    thresh = 8 * noise_sd * corr / np.sqrt(width)
    found = []
    taken = np.zeros(y.size, bool)
    for i in np.argsort(-smooth, kind="stable")[:5000]:
        if smooth[i] < thresh or len(found) >= 10:
            break
        if taken[i]:
            continue
        j0, j1 = max(0, i - int(15 / hz)), min(y.size, i + int(15 / hz))
        taken[j0:j1] = True
        if model_at[i] > 0.5 * smooth[i]:
            continue  # misfit of a modelled multiplet, not a new signal
        area = float(np.clip(resid[j0:j1], 0, None).sum() * hz / field)
        share = area / total_area if total_area > 0 else 0.0
        if share >= _MIN_SHARE:
            found.append((float(ppm[i]), share))
    return found
