"""The plane of array of the yield year: fixed or on a one-axis tracker, and the share of each light
part (direct, sky-diffuse, ground-reflected) its cover lets through at its angles of incidence.

- Tracking: ``pvlib.tracking.singleaxis`` (W. F. Marion, A. P. Dobos, "Rotation angle for the
  optimum tracking of one-axis trackers", NREL/TP-6A20-58891, 2013), with backtracking.
- Angle-of-incidence losses, as a factor of each part (1 at normal incidence):
  ``"glass"``: ``pvlib.iam.physical`` (Fresnel reflection and absorption of a glass cover;
  W. De Soto, S. A. Klein, W. A. Beckman, Solar Energy 80 (2006) 78), its sky and ground
  integrals by ``pvlib.iam.marion_diffuse`` (B. Marion, Solar Energy 2017);
  ``"martin-ruiz"``: ``pvlib.iam.martin_ruiz`` and its closed-form diffuse integrals
  ``pvlib.iam.martin_ruiz_diffuse`` (N. Martin, J. M. Ruiz, Solar Energy Materials and Solar
  Cells 70 (2001) 25).
"""
import numpy as np

from siltandem.errors import StackError

TRACKINGS = ("fixed", "one-axis")
ANGLE_LOSSES = ("none", "glass", "martin-ruiz")
#: the tracker's largest rotation from flat [deg] (common practice, no source)
MAX_ROTATION_DEG = 60.0
#: ground coverage ratio used for backtracking (pvlib.tracking.singleaxis's default, 2/7)
GROUND_COVERAGE = 2.0 / 7.0
#: glass cover: refractive index, extinction [1/m] and thickness [m] (pvlib.iam.physical's
#: defaults; De Soto et al. 2006)
GLASS = {"n": 1.526, "K": 4.0, "L": 0.002}
#: angular losses coefficient of the Martin-Ruiz model (pvlib's default, Martin & Ruiz 2001)
MARTIN_RUIZ_A_R = 0.16
#: tilts [deg] at which pvlib.iam.marion_diffuse is evaluated for a tracker (each call costs
#: about 0.1 s); other tilts interpolate linearly between them
DIFFUSE_TILT_GRID_DEG = np.arange(0.0, 91.0, 5.0)


def check_tracking(tracking, max_rotation_deg=None, ground_coverage=None, angle_losses="none"):
    """StackError naming the option for a tracking or angle-loss choice outside its range, or a
    tracker setting given for a fixed plane (None: the default)."""
    for value, options, option in ((tracking, TRACKINGS, "--tracking"),
                                   (angle_losses, ANGLE_LOSSES, "--angle-losses")):
        if value not in options:
            raise StackError(f"{option} {value!r} is not known", where=option,
                             fix="one of " + ", ".join(options))
    for value, option, what in (
            (max_rotation_deg, "--max-rotation", "degrees, 0 < R <= 90"),
            (ground_coverage, "--ground-coverage", "a ratio, 0 < R < 1")):
        if value is None:
            continue
        if tracking == "fixed":
            raise StackError(f"{option} is a tracker's setting, but the plane is fixed",
                             where=option, fix="add --tracking one-axis, or leave it out")
        try:
            number = float(value)
        except (TypeError, ValueError):
            number = np.nan
        if not np.isfinite(number):
            raise StackError(f"{option} {value!r} is not a number", where=option,
                             fix=f"give {what}")
        high_ok = number <= 90.0 if option == "--max-rotation" else number < 1.0
        if not (number > 0.0 and high_ok):
            raise StackError(f"{option} {number:g} is outside its range", where=option,
                             fix=f"give {what}")


def surface_orientation(sun, *, tilt_deg, azimuth_deg, tracking="fixed",
                        max_rotation_deg=MAX_ROTATION_DEG, ground_coverage=GROUND_COVERAGE):
    """The plane's tilt, azimuth and angle of incidence [deg] in every hour.

    Parameters
    ----------
    sun : dict
        ``zenith_deg`` (apparent) and ``azimuth_deg`` of every hour (see sky.sun_geometry).
    tilt_deg, azimuth_deg : float
        The fixed plane; on a tracker, its axis's tilt and azimuth (clockwise from north).
    tracking : {"fixed", "one-axis"}
    max_rotation_deg, ground_coverage : float
        The tracker's largest rotation and the ground coverage ratio of its rows (backtracking).

    Returns
    -------
    dict of (H,) ndarray
        ``surface_tilt_deg``, ``surface_azimuth_deg``, ``aoi_deg`` (hours with the sun down:
        the tracker flat).
    """
    import pvlib

    zenith, azimuth = sun["zenith_deg"], sun["azimuth_deg"]
    if tracking == "fixed":
        tilt = np.full(np.shape(zenith), float(tilt_deg))
        surface_azimuth = np.full(np.shape(zenith), float(azimuth_deg))
    else:
        tracker = pvlib.tracking.singleaxis(zenith, azimuth, axis_tilt=float(tilt_deg),
                                            axis_azimuth=float(azimuth_deg),
                                            max_angle=float(max_rotation_deg), backtrack=True,
                                            gcr=float(ground_coverage))
        tilt = np.asarray(tracker["surface_tilt"], dtype=float)
        surface_azimuth = np.asarray(tracker["surface_azimuth"], dtype=float)
        down = ~np.isfinite(tilt) | ~np.isfinite(surface_azimuth)
        tilt = np.where(down, float(tilt_deg), tilt)
        surface_azimuth = np.where(down, float(azimuth_deg), surface_azimuth)
    aoi = np.asarray(pvlib.irradiance.aoi(tilt, surface_azimuth, zenith, azimuth), dtype=float)
    return {"surface_tilt_deg": tilt, "surface_azimuth_deg": surface_azimuth, "aoi_deg": aoi}


def _glass_diffuse(tilt):
    """pvlib.iam.marion_diffuse('physical') sky and ground factors at the tilts [deg]: exact for
    one tilt, else interpolated on :data:`DIFFUSE_TILT_GRID_DEG`."""
    import pvlib

    unique = np.unique(tilt)
    grid = unique if unique.size == 1 else DIFFUSE_TILT_GRID_DEG
    table = pvlib.iam.marion_diffuse("physical", grid, **GLASS)
    sky = np.interp(tilt, grid, np.atleast_1d(table["sky"]))
    ground = np.interp(tilt, grid, np.atleast_1d(table["ground"]))
    return sky, ground


def angle_factors(aoi_deg, surface_tilt_deg, model="none"):
    """The share [0-1] of the direct, sky-diffuse and ground-reflected light the cover passes,
    relative to normal incidence, in every hour: dict ``direct``, ``sky``, ``ground``.

    ``model``: ``"none"`` (all 1), ``"glass"`` or ``"martin-ruiz"`` (see the module's notes).
    The sky factor is the isotropic sky's integral, also for the circumsolar part of the
    sky-diffuse light (a simplification: that part comes from near the sun).
    """
    import pvlib

    aoi = np.asarray(aoi_deg, dtype=float)
    tilt = np.asarray(surface_tilt_deg, dtype=float)
    if model == "none":
        ones = np.ones_like(aoi)
        return {"direct": ones, "sky": ones, "ground": ones}
    if model == "glass":
        direct = np.asarray(pvlib.iam.physical(aoi, **GLASS), dtype=float)
        sky, ground = _glass_diffuse(tilt)
    else:
        direct = np.asarray(pvlib.iam.martin_ruiz(aoi, a_r=MARTIN_RUIZ_A_R), dtype=float)
        diffuse = pvlib.iam.martin_ruiz_diffuse(tilt, a_r=MARTIN_RUIZ_A_R)
        sky, ground = diffuse["sky"], diffuse["ground"]
    return {"direct": np.nan_to_num(direct, nan=0.0),
            "sky": np.broadcast_to(np.asarray(sky, dtype=float), aoi.shape),
            "ground": np.broadcast_to(np.asarray(ground, dtype=float), aoi.shape)}
