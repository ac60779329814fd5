"""Layer-physics subcell law: carrier collection, diffusion dark current, depletion-region recombination.

One subcell is an emitter (quasi-neutral, thickness We), a depletion region (width Wd, taken as fully
collecting) and a base (quasi-neutral, thickness Wb), in that order from the sun side. In each
quasi-neutral region the excess minority-carrier density n obeys the steady diffusion equation

    D n'' - n / tau + g(x) = 0,        L = sqrt(D tau),

with n = 0 at the depletion edge (short circuit) and a recombining outer surface,
-D n' = S n (flux into the surface at velocity S). Light enters the emitter front with photon flux Phi
and is absorbed by Beer-Lambert's law, g(x) = Phi alpha exp(-alpha x). A second flux may enter the base
from the back (light returned by a back reflector; the caller computes it).

How the closed forms are evaluated
----------------------------------
The textbook solutions (Hovel 1975, eqs. for the front and back regions; the same in Sze & Ng ch. 13)
contain cosh(W/L) and sinh(W/L), which overflow for W >> L, a factor 1/(alpha^2 L^2 - 1) that is
singular at alpha L = 1, and S L / D, which is infinite for S = inf or L = inf. We use instead the
collection probability of a carrier generated at distance u from the depletion edge (reciprocity,
Donolato 1985)

    f(u) = N(W - u) / N(W),    N(z) = cosh(z/L) + (S/D) L sinh(z/L),

so that the collected fraction of the photons entering a region is eta = integral alpha g~(u) f(u) du.
Written out, every term is an integral of a product of exponentials, i.e. a first or second divided
difference of exp; all terms are positive and all exponents are scaled by exp(-W/L), so nothing
overflows and nothing cancels. The divided differences are evaluated with scipy.special.exprel (first
order) and, for close nodes, a Taylor series (second order). This form equals the textbook one
identically (the tests check it against the textbook form in 80-digit arithmetic and against a
numerical solution of the boundary-value problem).

Approximations the caller must know
-----------------------------------
- The depletion region collects every carrier generated in it (no recombination loss there under
  illumination) and its width is the one the caller passes (usually the zero-bias width).
- Superposition: collection does not depend on the operating voltage.
- One absorption coefficient for the whole subcell (a homojunction); no free-carrier or parasitic
  absorption inside it; no photon recycling or luminescent coupling; normal incidence.
- Low injection, uniform doping, no drift fields in the quasi-neutral regions, no bandgap narrowing
  (pass an effective intrinsic density if the emitter has it).
- Back-entering light is a single pass given by the caller; multiple reflections are the optics' job.
- Scattered (light-trapped) light absorbed in a subcell is taken as generated uniformly over it (common
  for weak, many-pass light; a Lambertian pass's alpha E2(alpha x) is steeper where trapping adds little).

References
----------
H. J. Hovel, *Solar Cells*, Semiconductors and Semimetals vol. 11 (Academic Press, 1975), ch. 2
(collection in the front, depletion and base regions; from memory).
S. M. Sze, K. K. Ng, *Physics of Semiconductor Devices*, 3rd ed. (Wiley, 2007), ch. 2 (diode
saturation current, generation-recombination current) and ch. 13 (spectral response; from memory).
W. W. Gaertner, Phys. Rev. 116 (1959) 84 (depletion-region plus long-base collection).
C. Donolato, Appl. Phys. Lett. 46 (1985) 270 (reciprocity: collection probability).
C.-T. Sah, R. N. Noyce, W. Shockley, Proc. IRE 45 (1957) 1228 (depletion-region recombination).
A. Luque, S. Hegedus (eds.), *Handbook of Photovoltaic Science and Engineering* (Wiley, 2003/2011),
ch. 3 (the same closed forms; from memory).
"""
from typing import NamedTuple

import numpy as np

from siltandem.constants import ELEMENTARY_CHARGE_C, thermal_voltage_V
from siltandem.laws.checks import CollectionParameterError, checked, finite
from siltandem.numerics.memo import ValueMemo

__all__ = [
    "CollectedPhotocurrent", "DiffusionSaturationCurrent",
    "einstein_diffusivity", "diffusion_length", "layer_collection_fraction", "uniform_collection_fraction",
    "collected_photocurrent", "region_saturation_current", "diffusion_saturation_current",
]

_SERIES_TERMS = 20  # second divided difference, nodes within 1 of each other: 21/22! < 1e-19
_LARGEST_RATIO = 1e250  # W/L is capped here: exp(-W/L) is 0 long before, and nothing overflows


def _exprel(x):
    """scipy.special.exprel, (e^x - 1)/x; imported on first use (scipy.special costs a command
    about 0.1 s of start-up)."""
    from scipy.special import exprel

    return exprel(x)


class CollectedPhotocurrent(NamedTuple):
    """Photon and collected currents of one subcell [A/m^2, or A/m^2 per unit of the flux's spectral axis].

    ``absorbed_A_m2 - collected_A_m2`` is the collection loss; the depletion region collects all it absorbs.
    """

    emitter_A_m2: np.ndarray             # collected from the emitter
    depletion_A_m2: np.ndarray           # collected from (= absorbed in) the depletion region
    base_A_m2: np.ndarray                # collected from the base
    emitter_absorbed_A_m2: np.ndarray    # q x photons absorbed in the emitter
    base_absorbed_A_m2: np.ndarray       # q x photons absorbed in the base
    absorbed_A_m2: np.ndarray            # q x photons absorbed in the whole subcell

    @property
    def collected_A_m2(self):
        """Total collected current density (emitter + depletion + base)."""
        return self.emitter_A_m2 + self.depletion_A_m2 + self.base_A_m2

    @property
    def collection_loss_A_m2(self):
        """Absorbed but not collected (recombined in the bulk or at a surface)."""
        return self.absorbed_A_m2 - self.collected_A_m2


class DiffusionSaturationCurrent(NamedTuple):
    """Ideality-1 saturation current densities of the two quasi-neutral regions [A/m^2]."""

    emitter_A_m2: np.ndarray
    base_A_m2: np.ndarray

    @property
    def total_A_m2(self):
        """J01 of the subcell = emitter + base."""
        return self.emitter_A_m2 + self.base_A_m2


# --------------------------------------------------------------------------------------------
# validation


# --------------------------------------------------------------------------------------------
# divided differences of exp (all nodes finite; results positive)


def _dd1(x, y):
    """First divided difference (e^x - e^y) / (x - y), exact at x = y, for finite x, y."""
    return np.exp(np.maximum(x, y)) * _exprel(-np.abs(x - y))


def _dd2(x, y, z):
    """Second divided difference exp[x, y, z] (symmetric in its nodes), for finite nodes.

    With the nodes sorted a >= b >= c and beta = b - a, gamma = c - a (<= 0),
    exp[a, b, c] = e^a (exp[0, beta] - exp[beta, gamma]) / (-gamma) when gamma < -1 (at most a
    factor ~3 of cancellation), else e^a sum_k h_k(beta, gamma) / (k + 2)!, h_k the complete
    homogeneous symmetric polynomial (h_k = beta h_(k-1) + gamma^k).
    """
    low, mid, high = np.sort(np.stack(np.broadcast_arrays(x, y, z)), axis=0)
    beta, gamma = mid - high, low - high
    far = gamma < -1.0
    value = np.empty_like(gamma)
    value[far] = (_exprel(beta[far]) - np.exp(beta[far]) * _exprel(gamma[far] - beta[far])) / -gamma[far]
    g, b = gamma[~far], beta[~far]
    h = np.ones_like(g)
    power = np.ones_like(g)
    series = np.full_like(g, 0.5)
    factorial = 2.0
    for k in range(1, _SERIES_TERMS + 1):
        power = power * g
        h = b * h + power
        factorial *= k + 2
        series = series + h / factorial
    value[~far] = series
    return np.exp(high) * value


# --------------------------------------------------------------------------------------------
# transport helpers


def einstein_diffusivity(mobility_m2_V_s, *, temperature_K):
    """Minority-carrier diffusion coefficient D = mu kT / q [m^2/s] (Einstein relation, non-degenerate).

    Parameters
    ----------
    mobility_m2_V_s : array_like
        Minority-carrier mobility [m^2 V^-1 s^-1] (1 cm^2/Vs = 1e-4 m^2/Vs), > 0.
    temperature_K : array_like
        Temperature [K], > 0.

    References
    ----------
    A. Einstein, Ann. Phys. 17 (1905) 549; Sze & Ng (2007), ch. 1.
    """
    mobility = checked("mobility_m2_V_s", mobility_m2_V_s, "m^2/(V s)", where="einstein_diffusivity")
    temperature = checked("temperature_K", temperature_K, "K", where="einstein_diffusivity")
    return mobility * thermal_voltage_V(temperature)


def diffusion_length(lifetime_s, *, diffusivity_m2_s):
    """Minority-carrier diffusion length L = sqrt(D tau) [m].

    Parameters
    ----------
    lifetime_s : array_like
        Minority-carrier lifetime [s], > 0 (inf allowed: no bulk recombination).
    diffusivity_m2_s : array_like
        Diffusion coefficient [m^2/s], > 0.
    """
    tau = checked("lifetime_s", lifetime_s, "s", where="diffusion_length", inf_ok=True)
    d = checked("diffusivity_m2_s", diffusivity_m2_s, "m^2/s", where="diffusion_length")
    return np.sqrt(d * tau)


# --------------------------------------------------------------------------------------------
# collection


def _surface_weights(srv_m_s, thickness_m, diffusivity_m2_s):
    """t = sigma / (1 + sigma) and 1 - t for sigma = S W / D in [0, inf]."""
    with np.errstate(invalid="ignore"):
        sigma = srv_m_s * thickness_m / diffusivity_m2_s
    sigma = np.where(thickness_m == 0, 0.0, sigma)
    with np.errstate(invalid="ignore"):
        t = np.where(np.isinf(sigma), 1.0, sigma / (1.0 + sigma))
    return t, 1.0 / (1.0 + sigma)


def _collection(alpha, thickness, length, srv, diffusivity, lit_at_junction):
    """Collected fraction of the photons entering one quasi-neutral region (validated inputs)."""
    a = alpha * thickness
    k = np.minimum(thickness / length, _LARGEST_RATIO)
    t, one_minus_t = _surface_weights(srv, thickness, diffusivity)
    e2 = np.exp(-2.0 * k)
    if lit_at_junction:
        m = -(a + k)
        inner = 0.5 * (_dd1(m, 0.0) + _dd1(m, -2.0 * k))
        surface = _dd2(m, 0.0, -2.0 * k)
    else:
        inner = 0.5 * (_dd1(-k, -a) + _dd1(-k, -(a + 2.0 * k)))
        surface = _dd2(-k, -a, -(a + 2.0 * k))
    numerator = a * (one_minus_t * inner + t * surface)
    denominator = one_minus_t * 0.5 * (1.0 + e2) + t * _exprel(-2.0 * k)
    return numerator / denominator


def _collection_of(alpha, thickness, length, srv, diffusivity, lit_at_junction):
    return _collection(alpha, thickness, length, srv, diffusivity, lit_at_junction=bool(lit_at_junction))


#: a layer study calls the law design after design with one region's inputs unchanged (the
#: unvaried subcells, the emitters): its collected fraction is remembered, keyed by the inputs' bytes.
#: 128 entries hold a varied base's 100 values of a 100 x 100 map (the coupling's lower subcell:
#: a 4 x 40 triple map's compile 6.3-7.1 -> 5.2-6.2 ms/design CPU against 16 entries); an entry of
#: the coupling's (500, 16) grid is 64 kB, of a stacked optics pass (16, 2002) 256 kB
_COLLECTION_MEMO = ValueMemo(_collection_of, entries=128)
_UNIFORM_MEMO = ValueMemo(lambda *args: _uniform(*args), entries=16)


def layer_collection_fraction(absorption_per_m, *, thickness_m, diffusion_length_m, diffusivity_m2_s,
                              surface_srv_m_s, lit_side, where="layer"):
    """Fraction of the photons entering one quasi-neutral region that is collected at its depletion edge.

    Parameters
    ----------
    absorption_per_m : array_like
        Absorption coefficient alpha [1/m], >= 0 (1/cm = 100/m).
    thickness_m : array_like
        Quasi-neutral thickness W [m], >= 0.
    diffusion_length_m : array_like
        Minority-carrier diffusion length L [m], > 0 (inf allowed).
    diffusivity_m2_s : array_like
        Minority-carrier diffusion coefficient D [m^2/s], > 0 (enters only through S/D).
    surface_srv_m_s : array_like
        Recombination velocity S [m/s] of the surface opposite the depletion edge, >= 0 (inf allowed;
        1 cm/s = 0.01 m/s).
    lit_side : {"surface", "junction"}
        Which face the light enters through: "surface" (the emitter under front light, the base under
        back light) or "junction" (the base under front light, the emitter under back light).
    where : str
        Name for error messages.

    Returns
    -------
    ndarray
        eta in [0, 1 - exp(-alpha W)], broadcast shape of the inputs.

    Notes
    -----
    With u the distance from the depletion edge, k = W/L, a = alpha W, sigma = S W / D,
    t = sigma/(1 + sigma) and exp[...] the divided differences of the exponential,
    exp[x, y] = (e^x - e^y)/(x - y) and exp[x, y, z] = (exp[x, y] - exp[y, z])/(x - z):

    lit at the surface (Hovel's front region): g ~ exp(-alpha (W - u)),
        eta = a [(1-t)/2 (exp[-k, -a] + exp[-k, -a-2k]) + t exp[-k, -a, -a-2k]] / den
    lit at the junction (Hovel's base region): g ~ exp(-alpha u),
        eta = a [(1-t)/2 (exp[-a-k, 0] + exp[-a-k, -2k]) + t exp[-a-k, 0, -2k]] / den
    den = (1-t)(1 + exp(-2k))/2 + t (1 - exp(-2k))/(2k).

    These equal the textbook forms identically, e.g. for the base (Hovel ch. 2)
    eta = alpha L/(alpha^2 L^2 - 1) [alpha L - (s (cosh k - e^-a) + sinh k + alpha L e^-a)
    / (s sinh k + cosh k)] with s = S L / D: both are integral alpha g~(u) f(u) du with the collection
    probability f(u) = N(W - u)/N(W), N(z) = cosh(z/L) + (S/D) L sinh(z/L), here multiplied through
    by exp(-k)/(1 + sigma). Every term is positive, no exponent is positive (no overflow for W >> L),
    alpha L = 1 needs no special case, and S = inf or L = inf are ordinary values.

    References
    ----------
    H. J. Hovel (1975), ch. 2; C. Donolato, Appl. Phys. Lett. 46 (1985) 270 (collection probability).
    """
    if lit_side not in ("surface", "junction"):
        raise CollectionParameterError(
            f"{where}: lit_side = {lit_side!r} is not known; give 'surface' or 'junction'.")
    alpha = checked("absorption_per_m", absorption_per_m, "1/m", where=where, zero_ok=True)
    w = checked("thickness_m", thickness_m, "m", where=where, zero_ok=True)
    length = checked("diffusion_length_m", diffusion_length_m, "m", where=where, inf_ok=True)
    d = checked("diffusivity_m2_s", diffusivity_m2_s, "m^2/s", where=where)
    s = checked("surface_srv_m_s", surface_srv_m_s, "m/s", where=where, zero_ok=True, inf_ok=True)
    return _collection(alpha, w, length, s, d, lit_side == "junction")


def uniform_collection_fraction(*, thickness_m, diffusion_length_m, diffusivity_m2_s, surface_srv_m_s,
                                where="layer"):
    """Mean collection probability [-] of carriers generated uniformly over one quasi-neutral region.
    Parameters as :func:`layer_collection_fraction` (W [m] >= 0, L [m] > 0 or inf, D [m^2/s] > 0, S [m/s]
    >= 0 or inf). Returns (1/W) integral_0^W f(u) du in [0, 1] (1 for W = 0), broadcast shape.
    Notes: with f(u) = N(W - u)/N(W), N(z) = cosh(z/L) + (S/D) L sinh(z/L) (Donolato 1985) the mean is
    [L sinh k + (S L^2/D)(cosh k - 1)] / [W (cosh k + (S L/D) sinh k)], k = W/L (tanh(k)/k for S = 0):
    the limit alpha -> 0 of `layer_collection_fraction` over alpha W, evaluated with the same divided
    differences at alpha W = 0 (no overflow). References: C. Donolato, Appl. Phys. Lett. 46 (1985) 270.
    """
    w = checked("thickness_m", thickness_m, "m", where=where, zero_ok=True)
    length = checked("diffusion_length_m", diffusion_length_m, "m", where=where, inf_ok=True)
    d = checked("diffusivity_m2_s", diffusivity_m2_s, "m^2/s", where=where)
    s = checked("surface_srv_m_s", surface_srv_m_s, "m/s", where=where, zero_ok=True, inf_ok=True)
    return _uniform(w, length, s, d)


def _uniform(thickness, length, srv, diffusivity):
    """`uniform_collection_fraction` on validated inputs: `_collection` over a, at a = 0."""
    k = np.minimum(thickness / length, _LARGEST_RATIO)
    t, one_minus_t = _surface_weights(srv, thickness, diffusivity)
    zero = np.zeros_like(k)
    inner = 0.5 * (_dd1(-k, zero) + _dd1(-k, -2.0 * k))
    denominator = one_minus_t * 0.5 * (1.0 + np.exp(-2.0 * k)) + t * _exprel(-2.0 * k)
    return (one_minus_t * inner + t * _dd2(-k, zero, -2.0 * k)) / denominator


def collected_photocurrent(absorption_per_m, *, photon_flux_m2_s, emitter_thickness_m,
                           emitter_diffusion_length_m, emitter_diffusivity_m2_s, front_srv_m_s,
                           depletion_width_m, base_thickness_m, base_diffusion_length_m,
                           base_diffusivity_m2_s, back_srv_m_s, back_photon_flux_m2_s=0.0,
                           uniform_absorbed_m2_s=0.0, base_absorption_per_m=None,
                           emitter_depletion_width_m=None, where="subcell"):
    """Collected photocurrent of each region of a subcell, and the absorbed photon current.

    Parameters
    ----------
    absorption_per_m : array_like
        Absorption coefficient alpha(lambda) of the absorber [1/m], >= 0; usually the wavelength axis.
    photon_flux_m2_s : array_like
        Photon flux entering the emitter front [m^-2 s^-1], after reflection and the layers above;
        per wavelength sample or per nm (the results then carry the same "per"), finite.
    emitter_thickness_m : array_like
        Quasi-neutral emitter thickness [m], >= 0 (emitter layer minus its share of the depletion region).
    emitter_diffusion_length_m, base_diffusion_length_m : array_like
        Minority-carrier diffusion lengths [m], > 0 (inf allowed); see :func:`diffusion_length`.
    emitter_diffusivity_m2_s, base_diffusivity_m2_s : array_like
        Minority-carrier diffusion coefficients [m^2/s], > 0; see :func:`einstein_diffusivity`.
    front_srv_m_s, back_srv_m_s : array_like
        Recombination velocities of the emitter front and base back surfaces [m/s], >= 0, inf allowed
        (a window or back-surface-field layer is represented by its effective velocity).
    depletion_width_m : array_like
        Depletion width [m], >= 0 (see :func:`siltandem.laws.junction.abrupt_junction`); every carrier
        generated in it is collected.
    base_thickness_m : array_like
        Quasi-neutral base thickness [m], >= 0.
    back_photon_flux_m2_s : array_like, optional
        Photon flux entering the base from the back [m^-2 s^-1] (e.g. returned by a back reflector),
        single pass, same spectral "per" as ``photon_flux_m2_s``. Default 0.
    uniform_absorbed_m2_s : array_like, optional
        Photons absorbed in the subcell from scattered light [m^-2 s^-1, same "per"], >= 0; default 0.
    base_absorption_per_m : array_like, optional
        A heterojunction's base absorption [1/m], >= 0: the base and the base's part of the
        depletion region absorb with it, the emitter and its part with ``absorption_per_m``.
        Default None: one absorber (the homojunction; results unchanged).
    emitter_depletion_width_m : array_like, optional
        With ``base_absorption_per_m``: the part of the depletion width in the emitter [m],
        0 <= it <= ``depletion_width_m``; default None (all of it).
    where : str
        Name of the subcell for error messages.

    Returns
    -------
    CollectedPhotocurrent
        Per-region collected current densities, the absorbed photon currents (q times photons per
        area and time) [A/m^2 per the flux's spectral unit], of the broadcast shape of all inputs.
        Integrate over wavelength with the caller's rule.

    Notes
    -----
    With Phi the front flux, X = exp(-alpha We), Y = exp(-alpha Wd), Z = exp(-alpha Wb) and
    eta_s, eta_j the collected fractions of :func:`layer_collection_fraction` (lit at the surface,
    lit at the junction):

        J_emitter   = q Phi eta_s(emitter)                 + q Phi_b Z Y eta_j(emitter)
        J_depletion = q Phi X (1 - Y)                      + q Phi_b Z (1 - Y)
        J_base      = q Phi X Y eta_j(base)                + q Phi_b eta_s(base)
        absorbed    = q (Phi + Phi_b) (1 - X Y Z)

    A heterojunction (``base_absorption_per_m`` alpha_b): Y = exp(-alpha Wd,e - alpha_b Wd,b)
    and Z = exp(-alpha_b Wb), the base's eta with alpha_b; Beer-Lambert layer by layer.
    The depletion term with a long base (Wb >> L, S irrelevant) gives Gaertner's
    J = q Phi X [1 - Y / (1 + alpha L)].
    Scattered photons G, generated uniformly over W = We + Wd + Wb, add q G (We/W) eta_u(emitter),
    q G Wd/W and q G (Wb/W) eta_u(base), eta_u from :func:`uniform_collection_fraction`.

    References
    ----------
    H. J. Hovel (1975), ch. 2; S. M. Sze, K. K. Ng (2007), ch. 13; W. W. Gaertner, Phys. Rev. 116
    (1959) 84; C. Donolato, Appl. Phys. Lett. 46 (1985) 270.
    """
    alpha = checked("absorption_per_m", absorption_per_m, "1/m", where=where, zero_ok=True)
    flux = finite("photon_flux_m2_s", photon_flux_m2_s, "1/(m^2 s)", where=where)
    back_flux = finite("back_photon_flux_m2_s", back_photon_flux_m2_s, "1/(m^2 s)", where=where)
    we = checked("emitter_thickness_m", emitter_thickness_m, "m", where=where, zero_ok=True)
    le = checked("emitter_diffusion_length_m", emitter_diffusion_length_m, "m", where=where,
                  inf_ok=True)
    de = checked("emitter_diffusivity_m2_s", emitter_diffusivity_m2_s, "m^2/s", where=where)
    sf = checked("front_srv_m_s", front_srv_m_s, "m/s", where=where, zero_ok=True, inf_ok=True)
    wd = checked("depletion_width_m", depletion_width_m, "m", where=where, zero_ok=True)
    wb = checked("base_thickness_m", base_thickness_m, "m", where=where, zero_ok=True)
    lb = checked("base_diffusion_length_m", base_diffusion_length_m, "m", where=where, inf_ok=True)
    db = checked("base_diffusivity_m2_s", base_diffusivity_m2_s, "m^2/s", where=where)
    sb = checked("back_srv_m_s", back_srv_m_s, "m/s", where=where, zero_ok=True, inf_ok=True)

    q = ELEMENTARY_CHARGE_C
    if base_absorption_per_m is None:
        alpha_b, depth_d, depth = alpha, alpha * wd, alpha * (we + wd + wb)
    else:
        alpha_b = checked("base_absorption_per_m", base_absorption_per_m, "1/m", where=where, zero_ok=True)
        wde = wd if emitter_depletion_width_m is None else checked(
            "emitter_depletion_width_m", emitter_depletion_width_m, "m", where=where, zero_ok=True)
        wde = np.minimum(wde, wd)
        depth_d = alpha * wde + alpha_b * (wd - wde)
        depth = alpha * we + depth_d + alpha_b * wb
    x, y, z = np.exp(-alpha * we), np.exp(-depth_d), np.exp(-alpha_b * wb)
    absorbed_e, absorbed_d, absorbed_b = -np.expm1(-alpha * we), -np.expm1(-depth_d), \
        -np.expm1(-alpha_b * wb)
    emitter_front = _COLLECTION_MEMO(alpha, we, le, sf, de, False)
    base_front = _COLLECTION_MEMO(alpha_b, wb, lb, sb, db, True)
    emitter = q * flux * emitter_front
    depletion = q * flux * x * absorbed_d
    base = q * flux * x * y * base_front
    emitter_absorbed = q * flux * absorbed_e
    base_absorbed = q * flux * x * y * absorbed_b
    absorbed = q * flux * -np.expm1(-depth)
    if np.any(back_flux != 0):
        emitter_back = _collection(alpha, we, le, sf, de, lit_at_junction=True)
        base_back = _collection(alpha_b, wb, lb, sb, db, lit_at_junction=False)
        emitter = emitter + q * back_flux * z * y * emitter_back
        depletion = depletion + q * back_flux * z * absorbed_d
        base = base + q * back_flux * base_back
        emitter_absorbed = emitter_absorbed + q * back_flux * z * y * absorbed_e
        base_absorbed = base_absorbed + q * back_flux * absorbed_b
        absorbed = absorbed + q * back_flux * -np.expm1(-depth)
    scattered = checked("uniform_absorbed_m2_s", uniform_absorbed_m2_s, "1/(m^2 s)", where=where, zero_ok=True)
    if np.any(scattered != 0):
        width = np.where(we + wd + wb > 0, we + wd + wb, 1.0)
        shares, generated = [part / width for part in (we, wd, wb)], q * scattered
        emitter = emitter + generated * shares[0] * _UNIFORM_MEMO(we, le, sf, de)
        depletion = depletion + generated * shares[1]
        base = base + generated * shares[2] * _UNIFORM_MEMO(wb, lb, sb, db)
        emitter_absorbed, base_absorbed = (emitter_absorbed + generated * shares[0],
                                           base_absorbed + generated * shares[2])
        absorbed = absorbed + generated
    arrays = np.broadcast_arrays(emitter, depletion, base, emitter_absorbed, base_absorbed, absorbed)
    return CollectedPhotocurrent(*(np.array(a, dtype=float) for a in arrays))


# --------------------------------------------------------------------------------------------
# dark currents


def region_saturation_current(thickness_m, *, doping_m3, intrinsic_density_m3, diffusion_length_m,
                              diffusivity_m2_s, surface_srv_m_s, where="region"):
    """Ideality-1 saturation current density [A/m^2] of one quasi-neutral region.

    Parameters
    ----------
    thickness_m : array_like
        Quasi-neutral thickness W [m], > 0.
    doping_m3 : array_like
        Net majority doping N of the region [m^-3] (1 cm^-3 = 1e6 m^-3), > 0.
    intrinsic_density_m3 : array_like
        Intrinsic carrier density ni [m^-3] at the cell temperature (effective, with any bandgap
        narrowing), > 0.
    diffusion_length_m : array_like
        Minority-carrier diffusion length L [m], > 0 (inf allowed).
    diffusivity_m2_s : array_like
        Minority-carrier diffusion coefficient D [m^2/s], > 0.
    surface_srv_m_s : array_like
        Recombination velocity S of the outer surface [m/s], >= 0 (inf allowed).
    where : str
        Name for error messages.

    Returns
    -------
    ndarray
        J0 [A/m^2] (1 A/m^2 = 1e-4 A/cm^2), broadcast shape of the inputs.

    Notes
    -----
    The textbook form (Sze & Ng ch. 2 and 13; Hovel ch. 2), with s = S L / D:

        J0 = q ni^2 D / (N L) * (s cosh(W/L) + sinh(W/L)) / (s sinh(W/L) + cosh(W/L))

    limits: W >> L: q ni^2 D / (N L); W << L and S = 0: q ni^2 D W / (N L^2); W << L and S = inf:
    q ni^2 D / (N W); L = inf: q ni^2 S / (N (1 + S W / D)). Evaluated as

        J0 = q ni^2 D / (N W) * (t C + (1-t) k^2 H) / ((1-t) C + t H)

    with k = W/L, sigma = S W / D, t = sigma / (1 + sigma), C = (1 + exp(-2k))/2 and
    H = (1 - exp(-2k)) / (2k) (scipy.special.exprel), which is finite for every S in [0, inf] and
    every L in (0, inf].

    References
    ----------
    W. Shockley, Bell Syst. Tech. J. 28 (1949) 435; S. M. Sze, K. K. Ng (2007), ch. 2; H. J. Hovel
    (1975), ch. 2 (finite region with a recombining surface; from memory).
    """
    w = checked("thickness_m", thickness_m, "m", where=where)
    n_dop = checked("doping_m3", doping_m3, "m^-3", where=where)
    ni = checked("intrinsic_density_m3", intrinsic_density_m3, "m^-3", where=where)
    length = checked("diffusion_length_m", diffusion_length_m, "m", where=where, inf_ok=True)
    d = checked("diffusivity_m2_s", diffusivity_m2_s, "m^2/s", where=where)
    s = checked("surface_srv_m_s", surface_srv_m_s, "m/s", where=where, zero_ok=True, inf_ok=True)
    k = np.minimum(w / length, _LARGEST_RATIO)
    t, one_minus_t = _surface_weights(s, w, d)
    c = 0.5 * (1.0 + np.exp(-2.0 * k))
    h = _exprel(-2.0 * k)
    ratio = (t * c + one_minus_t * k * (k * h)) / (one_minus_t * c + t * h)
    return ELEMENTARY_CHARGE_C * ni * ni * d / (n_dop * w) * ratio


def diffusion_saturation_current(*, intrinsic_density_m3, emitter_doping_m3, emitter_thickness_m,
                                 emitter_diffusion_length_m, emitter_diffusivity_m2_s, front_srv_m_s,
                                 base_doping_m3, base_thickness_m, base_diffusion_length_m,
                                 base_diffusivity_m2_s, back_srv_m_s, where="subcell"):
    """J01 of the emitter and the base from the diffusion solution [A/m^2].

    Same layer parameters as :func:`collected_photocurrent` plus the two dopings [m^-3] and ni [m^-3]
    (from the materials library at the cell temperature). See :func:`region_saturation_current` for
    the equation; call it directly when the emitter and base have different ni (bandgap narrowing,
    heterojunction).

    Returns
    -------
    DiffusionSaturationCurrent
        ``emitter_A_m2``, ``base_A_m2`` and the property ``total_A_m2``.

    References
    ----------
    S. M. Sze, K. K. Ng (2007), ch. 2 and 13; H. J. Hovel (1975), ch. 2.
    """
    emitter = region_saturation_current(
        emitter_thickness_m, doping_m3=emitter_doping_m3, intrinsic_density_m3=intrinsic_density_m3,
        diffusion_length_m=emitter_diffusion_length_m, diffusivity_m2_s=emitter_diffusivity_m2_s,
        surface_srv_m_s=front_srv_m_s, where=f"{where} emitter")
    base = region_saturation_current(
        base_thickness_m, doping_m3=base_doping_m3, intrinsic_density_m3=intrinsic_density_m3,
        diffusion_length_m=base_diffusion_length_m, diffusivity_m2_s=base_diffusivity_m2_s,
        surface_srv_m_s=back_srv_m_s, where=f"{where} base")
    emitter, base = np.broadcast_arrays(emitter, base)
    return DiffusionSaturationCurrent(np.array(emitter), np.array(base))


