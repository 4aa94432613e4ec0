"""Overlapping bands resolved by a least-squares fit of band shapes. Arrays in, arrays out.

Two bands closer than about their width merge into one maximum, or into a maximum and a
shoulder: the height read at the maximum then includes the neighbour's wing, and the shoulder's
height (from the curvature) is only a lower bound. Where the picker has found the members of
such a group (maxima and second-derivative bands), :func:`resolve_overlaps` fits their sum to
the trace: each band a pseudo-Voigt (half Lorentzian, half Gaussian, the usual description of
condensed-phase infrared bands; common practice, no source) with its own position (free within
a few cm-1), width and height, on a constant offset. The fit is kept only when it describes the
trace to within a few noise standard deviations; then each band gets its own height, position
and width. Nothing else is changed.
"""

from __future__ import annotations

import numpy as np

#: Lorentzian fraction of the band shape used in the fit.
ETA = 0.5
#: Two bands belong to one group when they are closer than this many times the wider one's
#: FWHM estimate (their wings then add more than a few percent at each other's centre).
LINK_FWHM = 1.0
#: The fitted window runs this many FWHM beyond the outer bands of a group.
WINDOW_FWHM = 1.5
#: A fitted position may move at most this far (cm-1) from where the band was found.
MAX_SHIFT_CM1 = 3.0
#: Fitted FWHM bounds (cm-1).
MIN_FWHM_CM1, MAX_FWHM_CM1 = 3.0, 80.0
#: A fit is kept when the RMS of its residual is at most this many noise standard deviations
#: (and at most this fraction of the group's highest point).
MAX_RESIDUAL_SD = 4.0
MAX_RESIDUAL_FRACTION = 0.05
#: Groups larger than this are left as they are.
MAX_GROUP = 6


def pseudo_voigt(x: np.ndarray, centre: float, fwhm: float, height: float, eta: float = ETA):
    """A band of the given height and FWHM: ``eta`` Lorentzian plus ``1 - eta`` Gaussian."""
    d2 = ((x - centre) / (0.5 * fwhm)) ** 2
    return height * (eta / (1.0 + d2) + (1.0 - eta) * np.exp(-np.log(2.0) * d2))


def levenberg_marquardt(fun, jac, p0, lower, upper, *, iterations: int = 60, tol: float = 1e-8):
    """Least squares by Levenberg-Marquardt steps (Marquardt's scaling of the damping by the
    diagonal of J'J), each step clipped to the bounds. Returns the parameters and the residual.
    Small problems only (a few tens of parameters)."""
    p = np.clip(np.asarray(p0, float), lower, upper)
    r = fun(p)
    cost = float(r @ r)
    lam = 1e-3
    for _ in range(iterations):
        j = jac(p)
        a = j.T @ j
        g = j.T @ r
        diag = np.maximum(np.diag(a), 1e-12)
        improved = False
        for _ in range(10):  # raise the damping until the step lowers the cost
            try:
                dp = np.linalg.solve(a + lam * np.diag(diag), -g)
            except np.linalg.LinAlgError:
                lam *= 10.0
                continue
            p_new = np.clip(p + dp, lower, upper)
            r_new = fun(p_new)
            c_new = float(r_new @ r_new)
            if c_new < cost:
                improved = True
                break
            lam *= 10.0
        if not improved:
            break
        done = cost - c_new <= tol * max(cost, 1e-300)
        p, r, cost = p_new, r_new, c_new
        lam = max(lam / 10.0, 1e-12)
        if done:
            break
    return p, r


def _groups(pos: np.ndarray, fwhm: np.ndarray, usable: np.ndarray) -> list[np.ndarray]:
    order = np.argsort(pos)
    out, cur = [], [order[0]]
    for a, b in zip(order[:-1], order[1:]):
        w = max(fwhm[a], fwhm[b])
        if usable[a] and usable[b] and pos[b] - pos[a] < LINK_FWHM * w:
            cur.append(b)
        else:
            out.append(np.array(cur))
            cur = [b]
    out.append(np.array(cur))
    return [g for g in out if 2 <= g.size <= MAX_GROUP]


def resolve_overlaps(
    x: np.ndarray,
    y: np.ndarray,
    positions: np.ndarray,
    heights: np.ndarray,
    fwhm: np.ndarray,
    usable: np.ndarray,
    noise: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Positions, heights and FWHM (cm-1) of the bands after fitting each group of overlapping
    ones, and a mask of the bands whose values come from a kept fit.

    ``x`` (cm-1, uniform) and ``y`` are the baseline-corrected trace; ``positions``, ``heights``
    and ``fwhm`` the bands as found; ``usable`` marks the bands that may take part (not
    saturated, not beside a hole); ``noise`` the noise standard deviation per point of ``y``.
    """
    positions = np.asarray(positions, float).copy()
    heights = np.asarray(heights, float).copy()
    fwhm = np.asarray(fwhm, float).copy()
    fitted = np.zeros(positions.size, bool)
    if positions.size < 2:
        return positions, heights, fwhm, fitted
    w0 = np.clip(np.nan_to_num(fwhm, nan=12.0), MIN_FWHM_CM1, MAX_FWHM_CM1)
    groups = _groups(positions, w0, np.asarray(usable, bool))
    if not groups:
        return positions, heights, fwhm, fitted
    step = float(x[1] - x[0])
    for g in groups:  # one small fit per group of overlapping bands
        lo = positions[g].min() - WINDOW_FWHM * w0[g].max()
        hi = positions[g].max() + WINDOW_FWHM * w0[g].max()
        i, j = np.searchsorted(x, [lo, hi])
        if j - i < 3 * g.size + 2:
            continue
        xs, ys = x[i:j], y[i:j]
        sd = float(np.median(noise[i:j]))
        k = g.size
        p0 = np.concatenate([positions[g], w0[g], np.maximum(heights[g], 0.0)])
        lower = np.concatenate(
            [positions[g] - MAX_SHIFT_CM1, np.full(k, max(MIN_FWHM_CM1, 2 * step)), np.zeros(k)]
        )
        upper = np.concatenate(
            [positions[g] + MAX_SHIFT_CM1, np.full(k, MAX_FWHM_CM1), np.full(k, 2 * ys.max())]
        )
        span = float(np.ptp(ys)) or 1.0
        half = 0.5 * float(xs[-1] - xs[0]) or 1.0
        xm = 0.5 * float(xs[-1] + xs[0])
        # a straight local offset (the wings of bands outside the group) and one shared shape
        p0 = np.concatenate([p0, [0.0, 0.0, ETA]])
        lower = np.concatenate([lower, [-span, -span, 0.0]])
        upper = np.concatenate([upper, [span, span, 1.0]])
        p0 = np.clip(p0, lower + 1e-9, upper - 1e-9)

        def model(p, xs=xs, k=k, xm=xm, half=half):
            out = p[3 * k] + p[3 * k + 1] * (xs - xm) / half
            for c, w, h in zip(p[:k], p[k : 2 * k], p[2 * k : 3 * k]):
                out += pseudo_voigt(xs, c, w, h, p[3 * k + 2])
            return out

        def jac(p, xs=xs, k=k, xm=xm, half=half):
            eta = p[3 * k + 2]
            out = np.empty((xs.size, p.size))
            out[:, 3 * k] = 1.0
            out[:, 3 * k + 1] = (xs - xm) / half
            out[:, 3 * k + 2] = 0.0
            for n in range(k):
                c, w, h = p[n], p[k + n], p[2 * k + n]
                d = 2.0 * (xs - c) / w
                lor = 1.0 / (1.0 + d * d)
                gau = np.exp(-np.log(2.0) * d * d)
                df_dd = h * (-2.0 * d * (eta * lor * lor + (1.0 - eta) * np.log(2.0) * gau))
                out[:, n] = df_dd * (-2.0 / w)
                out[:, k + n] = df_dd * (-d / w)
                out[:, 2 * k + n] = eta * lor + (1.0 - eta) * gau
                out[:, 3 * k + 2] += h * (lor - gau)
            return out

        p, resid = levenberg_marquardt(lambda p, ys=ys: model(p) - ys, jac, p0, lower, upper)
        rms = float(np.sqrt(np.mean(resid**2)))
        if rms > max(MAX_RESIDUAL_SD * sd, 1e-12) or rms > MAX_RESIDUAL_FRACTION * float(ys.max()):
            continue
        positions[g], fwhm[g], heights[g] = p[:k], p[k : 2 * k], p[2 * k : 3 * k]
        fitted[g] = True
    return positions, heights, fwhm, fitted


__all__ = ["levenberg_marquardt", "pseudo_voigt", "resolve_overlaps"]
