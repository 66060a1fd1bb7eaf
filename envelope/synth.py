"""Forward model of a survey: surface temperatures for a known U, rendered thermograms, views.

These functions make synthetic scenes for tests and the demo house. They run the physics
forwards (known U -> surface temperature -> apparent reading -> pixels) so that the inverse
modules can be checked for consistency; they are not a substitute for outside references.

Façade coordinates are metres on the plane of the element, X to the right and Y up. Pixel
coordinates are (x, y) = (column, row), pixel centres at (col + 0.5, row + 0.5), y down.
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from envelope.constants import SIGMA, T0_K
from envelope.radiometry import DEFAULT_BAND_UM, apparent_temperature

_SIGMA = SIGMA
_ZERO_C = T0_K


def steady_surface_temperatures(u_w_m2k, t_i_c, t_e_c, r_si=0.13, r_se=0.04):
    """Interior and exterior surface temperatures of a wall in 1-D steady conduction [°C].

    Parameters
    ----------
    u_w_m2k : array_like
        Thermal transmittance, surface to surface resistances included [W m-2 K-1].
    t_i_c, t_e_c : array_like
        Interior and exterior (environmental) temperatures [°C].
    r_si, r_se : float
        Surface resistances [m2 K W-1]; defaults are the conventional values for horizontal
        heat flow of ISO 6946:2017 Table 7.

    Returns
    -------
    (ndarray, ndarray)
        ``(t_si_c, t_se_c)``.

    Notes
    -----
    Series resistance network: ``q = U (t_i - t_e)``, ``t_si = t_i - q R_si``,
    ``t_se = t_e + q R_se`` [1]. U must not exceed ``1 / (R_si + R_se)``.

    References
    ----------
    [1] ISO 6946:2017, Building components and building elements -- Thermal resistance and
        thermal transmittance -- Calculation methods, clause 6 and Table 7.
    """
    u = np.asarray(u_w_m2k, dtype=float)
    if np.any(u <= 0) or np.any(u > 1.0 / (r_si + r_se)):
        raise ValueError(f"u_w_m2k must lie in (0, 1/(r_si + r_se)] = (0, {1 / (r_si + r_se):.3f}]")
    q = u * (np.asarray(t_i_c, dtype=float) - np.asarray(t_e_c, dtype=float))
    return np.asarray(t_i_c) - q * r_si, np.asarray(t_e_c) + q * r_se


def _newton(residual, derivative, t0_k, tol_k=1e-12, max_iter=60):
    t = np.array(t0_k, dtype=float)
    for _ in range(max_iter):
        step = residual(t) / derivative(t)
        t = t - step
        if np.all(np.abs(step) < tol_k):
            break
    return t


def surface_temperature_for_u(u_w_m2k, t_ai_c, t_ae_c, t_r_c, emissivity, h_c):
    """Interior surface temperature that a wall of known U shows [°C].

    Parameters
    ----------
    u_w_m2k : array_like
        Thermal transmittance [W m-2 K-1].
    t_ai_c, t_ae_c : array_like
        Interior and exterior air temperatures [°C].
    t_r_c : array_like
        Reflected apparent (mean radiant) temperature seen by the surface [°C].
    emissivity : array_like
        Long-wave emissivity of the surface [-].
    h_c : array_like
        Interior convective coefficient [W m-2 K-1].

    Notes
    -----
    Solves ``U (T_ai - T_ae) = h_c (T_ai - T_si) + eps sigma (T_r^4 - T_si^4)`` for T_si
    (kelvin inside) by vectorised Newton iteration; the residual is monotone in T_si so the
    root is unique. It is the forward counterpart of the interior-surface U method of
    infrared thermography, after [1].

    References
    ----------
    [1] P. A. Fokaides and S. A. Kalogirou, "Application of infrared thermography for the
        determination of the overall heat transfer coefficient (U-value) in building
        envelopes", Applied Energy 88, 4358-4365, 2011.
    """
    u, tai, tae, tr, eps, hc = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (
        u_w_m2k, t_ai_c, t_ae_c, t_r_c, emissivity, h_c)))
    tai_k, tr_k = tai + _ZERO_C, tr + _ZERO_C
    q = u * (tai - tae)

    def residual(t):
        return hc * (tai_k - t) + eps * _SIGMA * (tr_k**4 - t**4) - q

    def derivative(t):
        return -hc - 4.0 * eps * _SIGMA * t**3

    t0 = tai_k - q / (hc + 4.0 * eps * _SIGMA * tai_k**3)
    out = _newton(residual, derivative, t0) - _ZERO_C
    return float(out) if out.ndim == 0 else out


def exterior_surface_temperature_for_u(u_w_m2k, t_ai_c, t_ae_c, t_sky_c, t_ground_c, f_sky,
                                       emissivity, h_c):
    """Exterior surface temperature that a wall of known U shows [°C].

    Parameters
    ----------
    u_w_m2k : array_like
        Thermal transmittance [W m-2 K-1].
    t_ai_c, t_ae_c : array_like
        Interior and exterior air temperatures [°C].
    t_sky_c, t_ground_c : array_like
        Sky and ground radiant temperatures [°C].
    f_sky : array_like
        View factor of the surface to the sky [-] (0.5 for a vertical wall in the open).
    emissivity, h_c : array_like
        Long-wave emissivity [-] and exterior convective coefficient [W m-2 K-1].

    Notes
    -----
    Solves ``U (T_ai - T_ae) = h_c (T_se - T_ae)
    + eps sigma [f_sky (T_se^4 - T_sky^4) + (1 - f_sky)(T_se^4 - T_ground^4)]`` by Newton
    iteration (kelvin inside): the exterior surface balance of the exterior infrared
    U method, after [1], with separate sky and ground long-wave exchange.

    References
    ----------
    [1] R. Albatici and A. M. Tonelli, "Infrared thermovision technique for the assessment of
        thermal transmittance value of opaque building elements on site", Energy and
        Buildings 42, 2177-2183, 2010.
    """
    u, tai, tae, tsky, tgr, fs, eps, hc = np.broadcast_arrays(*(
        np.asarray(v, dtype=float)
        for v in (u_w_m2k, t_ai_c, t_ae_c, t_sky_c, t_ground_c, f_sky, emissivity, h_c)))
    tae_k = tae + _ZERO_C
    sky4, gr4 = (tsky + _ZERO_C) ** 4, (tgr + _ZERO_C) ** 4
    q = u * (tai - tae)

    def residual(t):
        return (hc * (t - tae_k) + eps * _SIGMA * (fs * (t**4 - sky4) + (1 - fs) * (t**4 - gr4))
                - q)

    def derivative(t):
        return hc + 4.0 * eps * _SIGMA * t**3

    out = _newton(residual, derivative, tae_k + q / (hc + 4.0 * eps * _SIGMA * tae_k**3))
    out = out - _ZERO_C
    return float(out) if out.ndim == 0 else out


def render_apparent(object_c, emissivity, reflected_c, transmittance=1.0, atmosphere_c=None,
                    noise_k=0.0, offset_k=0.0, rng=None, band_um=DEFAULT_BAND_UM):
    """Render the apparent (blackbody-equivalent) thermogram of a scene [°C], float32.

    Parameters
    ----------
    object_c : array_like
        Object surface temperatures [°C] (image).
    emissivity, reflected_c, transmittance, atmosphere_c, band_um
        As in `envelope.radiometry.apparent_temperature`.
    noise_k : float
        Standard deviation of Gaussian pixel noise [K], NETD-like.
    offset_k : float
        Systematic camera error added to every pixel [K].
    rng : numpy.random.Generator or int, optional
        Random source or seed for the noise.

    Notes
    -----
    ``apparent = L^-1(tau eps L(T) + tau (1 - eps) L(T_refl) + (1 - tau) L(T_atm))
    + offset + N(0, noise^2)``; NaN pixels stay NaN.
    """
    app = np.asarray(apparent_temperature(object_c, emissivity, reflected_c, transmittance,
                                          atmosphere_c, band_um), dtype=float)
    app = app + float(offset_k)
    if noise_k > 0:
        gen = np.random.default_rng(rng)
        app = app + gen.normal(0.0, float(noise_k), size=app.shape)
    return app.astype(np.float32)


def _apply_h(h, x, y):
    h = np.asarray(h, dtype=float)
    w = h[2, 0] * x + h[2, 1] * y + h[2, 2]
    return (h[0, 0] * x + h[0, 1] * y + h[0, 2]) / w, (h[1, 0] * x + h[1, 1] * y + h[1, 2]) / w


def project_facade(facade_values, cell_m, pixel_to_metre, shape_px, fill=np.nan,
                   origin_m=(0.0, 0.0)):
    """Image, in pixel coordinates, of values given on a façade grid.

    Parameters
    ----------
    facade_values : ndarray, shape (ny, nx)
        Values on façade cells: ``facade_values[i, j]`` covers the square with lower-left
        corner ``origin + (j cell_m, i cell_m)`` [m]; row 0 is at the bottom (Y = origin),
        X to the right, Y up.
    cell_m : float
        Cell size [m].
    pixel_to_metre : array_like, shape (3, 3)
        Homography from pixel (x, y) to façade (X, Y) [m].
    shape_px : (int, int)
        Image shape (rows, cols).
    fill : float
        Value outside the façade grid.
    origin_m : (float, float)
        Façade coordinates of the grid's lower-left corner [m].

    Notes
    -----
    Each pixel centre (col + 0.5, row + 0.5) is mapped to the façade and the grid sampled
    bilinearly (``scipy.ndimage.map_coordinates``, order 1) between cell centres, nearest
    value in the outer half cell.
    """
    vals = np.asarray(facade_values, dtype=float)
    rows, cols = int(shape_px[0]), int(shape_px[1])
    yy, xx = np.mgrid[0:rows, 0:cols]
    fx, fy = _apply_h(pixel_to_metre, xx + 0.5, yy + 0.5)
    jf = (fx - origin_m[0]) / cell_m
    i_f = (fy - origin_m[1]) / cell_m
    inside = (jf >= 0) & (jf <= vals.shape[1]) & (i_f >= 0) & (i_f <= vals.shape[0])
    inside &= np.isfinite(jf) & np.isfinite(i_f)
    coords = np.stack([np.where(inside, i_f - 0.5, 0.0), np.where(inside, jf - 0.5, 0.0)])
    sampled = ndimage.map_coordinates(vals, coords, order=1, mode="nearest")
    return np.where(inside, sampled, fill)


def camera_homography(width_m, height_m, shape_px, yaw_deg=0.0, pitch_deg=0.0,
                      distance_m=None, focal_px=None):
    """Pixel-to-façade homography of a pinhole camera aimed at the centre of a façade.

    Parameters
    ----------
    width_m, height_m : float
        Façade extent [m]; the façade spans X in [0, width], Y in [0, height] (Y up).
    shape_px : (int, int)
        Image shape (rows, cols); the principal point is the image centre.
    yaw_deg : float
        Camera moved round the vertical axis (positive: camera to the +X side) [deg].
    pitch_deg : float
        Camera raised above the façade centre, looking down (positive) [deg].
    distance_m : float, optional
        Camera to façade-centre distance [m]; default fills about 90 % of the frame
        in a square-on view.
    focal_px : float, optional
        Focal length [pixels]; default the image width.

    Returns
    -------
    ndarray, shape (3, 3)
        H with ``[X, Y, 1] ~ H [x, y, 1]`` for pixel (x, y) (pixel centres at +0.5).

    Notes
    -----
    Camera centre ``C = P + d n``, ``n = (sin yaw cos pitch, sin pitch, cos yaw cos pitch)``,
    optical axis ``-n``, image x along ``z_cam x up``, image y down. For points of the plane
    Z = 0 the finite projective camera ``K R [I | -C]`` of [1] reduces to ``K [r1 r2 -R C]``; its inverse
    is returned.

    References
    ----------
    [1] R. Hartley and A. Zisserman, Multiple View Geometry in Computer Vision, 2nd ed., 2004.
    """
    rows, cols = int(shape_px[0]), int(shape_px[1])
    f = float(cols if focal_px is None else focal_px)
    if distance_m is None:
        distance_m = 1.1 * f * max(width_m / cols, height_m / rows)
    yaw, pitch = np.radians(yaw_deg), np.radians(pitch_deg)
    n = np.array([np.sin(yaw) * np.cos(pitch), np.sin(pitch), np.cos(yaw) * np.cos(pitch)])
    centre = np.array([width_m / 2.0, height_m / 2.0, 0.0]) + distance_m * n
    z_cam = -n
    x_cam = np.cross(z_cam, [0.0, 1.0, 0.0])
    x_cam /= np.linalg.norm(x_cam)
    y_cam = np.cross(z_cam, x_cam)
    rot = np.stack([x_cam, y_cam, z_cam])
    k = np.array([[f, 0.0, cols / 2.0], [0.0, f, rows / 2.0], [0.0, 0.0, 1.0]])
    metre_to_pixel = k @ np.column_stack([rot[:, 0], rot[:, 1], -rot @ centre])
    h = np.linalg.inv(metre_to_pixel)
    return h / h[2, 2]


def facade_rectangle_pixels(h, x0, y0, x1, y1):
    """Pixel corners (x, y) of the façade rectangle [x0, x1] x [y0, y1] [m], shape (4, 2).

    `h` is the pixel-to-metre homography; corners in order (x0, y0), (x1, y0), (x1, y1),
    (x0, y1).
    """
    inv = np.linalg.inv(np.asarray(h, dtype=float))
    fx = np.array([x0, x1, x1, x0], dtype=float)
    fy = np.array([y0, y0, y1, y1], dtype=float)
    px, py = _apply_h(inv, fx, fy)
    return np.column_stack([px, py])
