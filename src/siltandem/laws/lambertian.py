"""One Lambertian pass T = 2 E3(tau) as the layer optics evaluates it (laws/thinfilm.py), and its
memo across a study's designs.

T(tau) = integral_0^1 2 mu exp(-tau / mu) d mu = 2 E3(tau), E3 the exponential integral of order 3
(scipy.special.expn; M. A. Green, Prog. Photovolt. 10 (2002) 235, from memory). Beyond an optical
depth of 60 it is returned as 0: 2 E3(60) = 2.78e-28 (mpmath.expint), and E3 decreases, bounded by
exp(-x) / (x + 2) (M. Abramowitz, I. A. Stegun, Handbook of Mathematical Functions (1964) 5.1.19).
"""
import numpy as np

from siltandem.numerics.memo import EntryMemo

__all__ = ["LAMBERTIAN_ZERO_DEPTH", "two_e3", "TRANSMITTANCE_MEMO"]

#: optical depth beyond which `lambertian_transmittance` is 0: 2 E3(60) = 2.78e-28 (mpmath.expint),
#: below 2 exp(-60) / 62 = 2.8e-28 (Abramowitz and Stegun 5.1.19), and smaller beyond
LAMBERTIAN_ZERO_DEPTH = 60.0


def two_e3(tau):
    """2 E3(tau) (scipy.special.expn) where tau <= LAMBERTIAN_ZERO_DEPTH (and NaN), 0 beyond."""
    from scipy.special import expn     # here: scipy.special costs a command 0.1 s to import

    tau = np.asarray(tau, dtype=float)
    out = np.zeros(tau.shape)
    near = ~(tau > LAMBERTIAN_ZERO_DEPTH)
    out[near] = 2.0 * expn(3, tau[near])
    return out[()]


#: T = 2 E3 remembered entry by entry between calls (numerics/memo.py): the designs of a layer
#: study share most optical depths bit for bit, and E3 dominates the Lambertian channel's cost
TRANSMITTANCE_MEMO = EntryMemo(two_e3)
