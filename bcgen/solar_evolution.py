r"""The fainter Sun of the deep past: Gough's (1981) scaling of the solar constant.

.. math::

    S(t) = \frac{S_0}{1 + \tfrac{2}{5}\left(1 - t/t_\odot\right)}

with t the Sun's age at the epoch and t☉ its age today. For an epoch ``age``
years before 1950 CE, t = t☉ − age, so S = S0 / (1 + 0.4 · age / t☉). It is
applied to the solar constant S0 the spec states (the Sun of today in that
spec's convention), so a deep-time run differs from its control only by the
Sun's evolution. At 252 Ma the Sun is about 2.2 % fainter.

References
----------
Gough, D. O. (1981): Solar interior structure and luminosity variations.
Solar Physics 74, 21-34, doi:10.1007/BF00151270.
"""

from __future__ import annotations

import numpy as np

from bcgen.errors import InsolationError

REFERENCE = (
    "Gough, D. O. (1981): Solar interior structure and luminosity variations. "
    "Solar Physics 74, 21-34, doi:10.1007/BF00151270 (S = S0 / (1 + 0.4 (1 - t/t_sun)), "
    "t_sun = 4.57 Gyr)"
)
#: The Sun's age today, years (the value the scaling is commonly used with; from memory).
SUN_AGE_YEARS = 4.57e9


def gough_solar_constant_wm2(solar_constant_wm2, years_from_1950):
    """Scale today's solar constant to an epoch by Gough (1981).

    Parameters
    ----------
    solar_constant_wm2 : float or array_like
        S0 of today, W m-2 (the spec's own value).
    years_from_1950 : float or array_like
        Epoch in years relative to 1950 CE (negative in the past), not before
        the Sun formed (−4.57 Gyr).

    Returns
    -------
    float or numpy.ndarray
        S at the epoch, W m-2 (equal to S0 at 1950 CE).

    Raises
    ------
    InsolationError
        For a non-positive S0 or an epoch before the Sun formed.
    """
    s0 = np.asarray(solar_constant_wm2, dtype=float)
    t = np.asarray(years_from_1950, dtype=float)
    if not np.all(np.isfinite(s0) & (s0 > 0)):
        raise InsolationError("the solar constant must be a positive number of W m-2")
    if not np.all(np.isfinite(t) & (t > -SUN_AGE_YEARS)):
        raise InsolationError(
            "the Gough (1981) scaling needs an epoch after the Sun formed, 4.57 Gyr ago"
        )
    age_years = -t
    out = s0 / (1.0 + 0.4 * age_years / SUN_AGE_YEARS)
    return out if np.ndim(out) else float(out)
