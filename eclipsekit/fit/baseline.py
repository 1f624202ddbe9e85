"""Out-of-eclipse variability modelled with the eclipses: Fourier and Gaussian-process baselines.

The polynomial baseline of :class:`~eclipsekit.fit.problem.Problem` stays the default.
:class:`VariabilityProblem` adds, to the same per-segment polynomial columns,

* a short Fourier series in orbital phase (``harmonics`` pairs of cos/sin columns):
  reflection- and ellipsoidal-like variation and stable spots.  Its coefficients are
  linear and are solved inside the same variable projection (Golub & Pereyra 1973, SIAM
  J. Numer. Anal. 10, 413) as the polynomial's;
* optionally a Gaussian process (celerite2; Foreman-Mackey et al. 2017, AJ 154, 220)
  for evolving spots, granulation and oscillations, with a simple-harmonic-oscillator
  kernel (their eq. 20) plus a white jitter term.

Both multiply the eclipse model, ``flux = m(t) * (baseline(t) + gp(t)) + noise``: a spot
on the eclipsed star is occulted with the rest of its disc, so the eclipse removes a
share of the spot signal as it removes a share of the light (the usual first
approximation; light from the star in front and reflected light are not occulted the
same way, which this neglects).  The GP part is handled exactly by writing the data as
``y = flux / m``, whose covariance is ``K + diag(var / m^2)`` with ``K`` the kernel's
and ``var`` the flux variance (quoted errors squared plus jitter squared); the
likelihood of the flux is that of ``y`` times the Jacobian ``prod 1/m``.

Consistency between the steps: the least squares minimises the generalised chi-square
``r^T C^-1 r`` of ``y`` at the best linear coefficients (whitened residuals
``D^-1/2 L^-1 r`` of celerite2's factorisation ``C = L D L^T``), with the kernel and
jitter held at the values that maximise the marginal likelihood; the two steps
alternate until the hyperparameters settle (coordinate ascent of one likelihood).  The
MCMC's log-likelihood is the same Gaussian with the linear coefficients marginalised:
``-0.5 chi2 - 0.5 log det C - sum log m - 0.5 log det(X^T C^-1 X)``, hyperparameters held
at their maximum-likelihood values.  The reported baseline is ``X c`` plus the GP's
conditional mean at each point (celerite2 ``predict``), so residuals are ``flux - m *
baseline``.
"""

from __future__ import annotations

import contextlib
import math
from typing import Any, Iterator, Mapping

import numpy as np

from .. import orbit
from .problem import Problem

__all__ = ["BASELINES", "MAX_HARMONICS", "VariabilityProblem", "fourier_columns", "sho_kernel",
           "fit_hyperparameters", "gp_log_likelihood"]

#: the ``baseline=`` choices
BASELINES = ("auto", "polynomial", "fourier", "gp")
#: most orbital harmonics the Fourier baseline may use
MAX_HARMONICS = 4
#: lower bound of the GP's quality factor: 1/sqrt(2) is the non-oscillating (granulation-like) SHO
#: (Foreman-Mackey et al. 2017, sect. 4.1); upper: a coherent wave over ~100 cycles
Q_RANGE = (1 / math.sqrt(2), 100.0)


def fourier_columns(time: np.ndarray, period: float, t_ref: float, harmonics: int) -> np.ndarray:
    """cos and sin of 2 pi j (time - t_ref) / period for j = 1..``harmonics``: shape (n, 2 harmonics)."""
    return orbit.phase_harmonics((np.asarray(time, float) - t_ref) / period, harmonics)


def sho_kernel(hyper: Mapping[str, float]) -> Any:
    """celerite2 SHO term (Foreman-Mackey et al. 2017, eq. 20) from ``hyper`` (sigma, rho, Q)."""
    from celerite2 import terms

    return terms.SHOTerm(sigma=hyper["sigma"], rho=hyper["rho"], Q=hyper["Q"])


@contextlib.contextmanager
def _numpy_linalg_error() -> Iterator[None]:
    """celerite2's own LinAlgError (a matrix it cannot factorise or solve, e.g. from extreme
    hyperparameters or errors) as numpy's, which every caller of the likelihood already handles."""
    from celerite2.driver import LinAlgError

    try:
        yield
    except LinAlgError as exc:
        raise np.linalg.LinAlgError(f"Gaussian process: {exc}") from exc


def _gp(time: np.ndarray, diag: np.ndarray, hyper: Mapping[str, float]) -> Any:
    import celerite2

    gp = celerite2.GaussianProcess(sho_kernel(hyper), mean=0.0)
    with _numpy_linalg_error():
        gp.compute(time, diag=diag, check_sorted=False)
    return gp


def _whiten(gp: Any, r: np.ndarray) -> np.ndarray:
    """D^-1/2 L^-1 r for celerite2's factorisation C = L D L^T: its squares sum to r^T C^-1 r."""
    from celerite2 import driver

    z = np.ascontiguousarray(r, dtype=np.float64)[:, None].copy()
    with _numpy_linalg_error():
        z = driver.solve_lower(gp._t, gp._c, gp._U, gp._W, z, z)[:, 0]
    return z / np.sqrt(gp._d)


def _gls(gp: Any, X: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, float, float]:
    """Generalised least squares of ``y`` on the columns ``X``: (coefficients, log det X^T C^-1 X, chi2)."""
    with _numpy_linalg_error():
        ci_y = gp.apply_inverse(y)
        ci_x = gp.apply_inverse(X)
    G = X.T @ ci_x
    rhs = X.T @ ci_y
    coef = np.linalg.solve(G, rhs)
    return coef, float(np.linalg.slogdet(G)[1]), float(y @ ci_y - rhs @ coef)


def gp_log_likelihood(time: np.ndarray, resid: np.ndarray, var: np.ndarray, hyper: Mapping[str, float],
                      X: np.ndarray | None = None, jitter_scale: np.ndarray | float = 1.0) -> float:
    """Log marginal likelihood of ``resid`` (linear coefficients on ``X`` marginalised, flat priors).

    The white variance is ``var + (jitter * jitter_scale)^2`` (``jitter_scale`` = 1/m when
    ``resid`` is flux divided by the eclipse model m).
    """
    diag = var + (hyper.get("jitter", 0.0) * jitter_scale) ** 2
    if hyper.get("sigma", 0.0) > 0:
        gp = _gp(time, diag, hyper)
        logdet = float(gp._log_det)
        if X is None or X.shape[1] == 0:
            with _numpy_linalg_error():
                chi2, logdet_g = float(resid @ gp.apply_inverse(resid)), 0.0
        else:
            _, logdet_g, chi2 = _gls(gp, X, resid)
    else:  # white noise only
        w = 1.0 / diag
        logdet = float(np.sum(np.log(diag)))
        logdet_g, chi2 = 0.0, float(np.sum(w * resid ** 2))
        if X is not None and X.shape[1]:
            G = X.T @ (w[:, None] * X)
            rhs = X.T @ (w * resid)
            chi2 -= float(rhs @ np.linalg.solve(G, rhs))
            logdet_g = float(np.linalg.slogdet(G)[1])
    return -0.5 * (chi2 + logdet + logdet_g + resid.size * math.log(2 * math.pi))


def fit_hyperparameters(time: np.ndarray, resid: np.ndarray, var: np.ndarray, *, rho_min: float,
                        rho_max: float, X: np.ndarray | None = None, gp: bool = True,
                        start: Mapping[str, float] | None = None, jitter_scale: np.ndarray | float = 1.0) -> tuple[dict[str, float], float]:
    """Maximum of :func:`gp_log_likelihood` over the SHO kernel and the jitter; (hyperparameters, log L).

    ``gp`` False fits the jitter alone (white noise).  ``rho`` (the SHO's undamped period)
    is kept in [``rho_min``, ``rho_max``]: the caller sets ``rho_min`` above the eclipse
    duration so the GP cannot take the shape of an eclipse.
    """
    from scipy.optimize import minimize

    scale = float(np.sqrt(np.median(var)))
    amp = max(float(np.std(resid)), scale)
    lo = [math.log(1e-3 * scale)]
    hi = [math.log(10 * amp)]
    x0 = [math.log(max(0.1 * scale, start.get("jitter", 0.0) if start else 0.0) + 1e-3 * scale)]
    if gp:
        lo += [math.log(1e-3 * scale), math.log(rho_min), math.log(Q_RANGE[0])]
        hi += [math.log(10 * amp), math.log(rho_max), math.log(Q_RANGE[1])]
        s = start or {}
        x0 += [math.log(s.get("sigma", amp)), math.log(float(np.clip(s.get("rho", math.sqrt(rho_min * rho_max)),
                                                                     rho_min, rho_max))),
               math.log(s.get("Q", 2.0))]
    x0 = np.clip(x0, lo, hi)

    def unpack(x: np.ndarray) -> dict[str, float]:
        h = {"jitter": math.exp(x[0])}
        if gp:
            h.update(sigma=math.exp(x[1]), rho=math.exp(x[2]), Q=math.exp(x[3]))
        return h

    def nll(x: np.ndarray) -> float:
        try:
            val = -gp_log_likelihood(time, resid, var, unpack(x), X, jitter_scale)
        except (ValueError, ArithmeticError, np.linalg.LinAlgError):
            return 1e300
        return val if math.isfinite(val) else 1e300

    best = minimize(nll, x0, method="L-BFGS-B", bounds=list(zip(lo, hi)))
    # a second start from a short timescale: the likelihood in rho can have two maxima (wave vs noise)
    if gp:
        x1 = np.array(x0)
        x1[2] = math.log(rho_min * 1.5) if math.log(rho_min * 1.5) < hi[2] else x1[2]
        other = minimize(nll, np.clip(x1, lo, hi), method="L-BFGS-B", bounds=list(zip(lo, hi)))
        if other.fun < best.fun:
            best = other
    return unpack(best.x), float(-best.fun)


class VariabilityProblem(Problem):
    """:class:`~eclipsekit.fit.problem.Problem` with a Fourier series in orbital phase and optionally a GP.

    Extra parameters (keywords): ``harmonics`` (number of orbital harmonics, may be 0),
    ``period_ref`` and ``t_ref`` (the phase of the Fourier columns: a later small change
    of the fitted period or epoch only rotates the cos/sin coefficients) and ``hyper``
    (None: no GP; else ``sigma``, ``rho``, ``Q``, ``jitter`` in relative flux and days).
    Every point is fitted (no binning away from the eclipses: the baseline varies there).
    """

    def __init__(self, *args: Any, harmonics: int = 0, period_ref: float = 1.0, t_ref: float = 0.0,
                 hyper: Mapping[str, float] | None = None, **kw: Any):
        super().__init__(*args, **kw)
        d = self.degree
        poly = np.zeros((self.time.size, self.n_seg * (d + 1)))
        rows = np.arange(self.time.size)
        for j in range(d + 1):
            poly[rows, self.seg_index * (d + 1) + j] = self.xp[:, j]
        self.harmonics = int(harmonics)
        self.X = np.hstack([poly, fourier_columns(self.time, period_ref, t_ref, self.harmonics)])
        self.hyper = None if hyper is None else dict(hyper)
        self._gp_state: tuple[Any, np.ndarray] | None = None

    @property
    def n_linear(self) -> int:
        return self.X.shape[1]

    def set_hyper(self, hyper: Mapping[str, float] | None) -> None:
        self.hyper = None if hyper is None else dict(hyper)

    def _gp_for(self, m: np.ndarray) -> Any:
        var = (self.sig / m) ** 2 + (self.hyper["jitter"] / m) ** 2
        return _gp(self.time, var, self.hyper)

    def normal_solution(self, m: np.ndarray, flux: np.ndarray | None = None):
        """(coefficients, log det of the normal matrix, chi2 at the linear optimum) for model ``m``."""
        f = self.flux if flux is None else flux
        if self.hyper is None:
            A = m[:, None] * self.X
            G = A.T @ (self.w[:, None] * A)
            rhs = A.T @ (self.w * f)
            coef = np.linalg.solve(G, rhs)
            return coef, float(np.linalg.slogdet(G)[1]), float(f @ (self.w * f) - rhs @ coef)
        gp = self._gp_for(m)
        coef, logdet, chi2 = _gls(gp, self.X, f / m)
        self._gp_state = (gp, coef)
        return coef, logdet, chi2

    def project(self, m: np.ndarray, flux: np.ndarray | None = None):
        """Baseline (linear part plus the GP's conditional mean) at every point, coefficients, log det."""
        coef, logdet, _ = self.normal_solution(m, flux)
        base = self.X @ coef
        if self.hyper is not None:
            f = self.flux if flux is None else flux
            gp = self._gp_state[0]
            with _numpy_linalg_error():
                base = base + gp.predict(f / m - base, include_mean=False)
        return base, coef, logdet

    def evaluate(self, v: Mapping[str, float], flux: np.ndarray | None = None):
        """(model, baseline, normalised residuals, log det): with a GP the residuals are whitened."""
        m = self.model(v)
        if np.any(m <= 0):
            raise ValueError("eclipse model not positive")
        base, coef, logdet = self.project(m, flux)
        f = self.flux if flux is None else flux
        if self.hyper is None:
            return m, base, (f - m * base) / self.sig, logdet
        z = _whiten(self._gp_state[0], f / m - self.X @ coef)
        return m, base, z, logdet

    def log_posterior(self, params: Any) -> float:
        try:
            v = self.mapping.physical(params.valuesdict())
            lp = self._log_like(self.model(v)) - 0.5 * float(self.mapping.prior_residuals(v) @
                                                             self.mapping.prior_residuals(v))
        except (ValueError, ArithmeticError, np.linalg.LinAlgError):
            return -np.inf
        return lp if math.isfinite(lp) else -np.inf

    def _log_like(self, m: np.ndarray) -> float:
        """Log-likelihood with the linear coefficients marginalised (constants dropped)."""
        if np.any(m <= 0):
            return -np.inf
        coef, logdet_g, chi2 = self.normal_solution(m)
        if self.hyper is None:
            return -0.5 * (chi2 + logdet_g)
        # the flux's covariance is diag(m) C diag(m): log det C + 2 sum log m
        return -0.5 * (chi2 + logdet_g + float(self._gp_state[0]._log_det)) - float(np.sum(np.log(m)))

    def normal_solution_rows(self, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Per row of models: (chi2 + [log det C + 2 sum log m with a GP], log det of the normal matrix)."""
        chi2 = np.empty(m.shape[0])
        logdet = np.empty(m.shape[0])
        for i, row in enumerate(m):
            if np.any(row <= 0):
                chi2[i], logdet[i] = np.inf, 0.0
                continue
            _, logdet[i], chi2[i] = self.normal_solution(row)
            if self.hyper is not None:
                chi2[i] += float(self._gp_state[0]._log_det) + 2 * float(np.sum(np.log(row)))
        return chi2, logdet


#: BIC difference above which the richer out-of-eclipse model is adopted: "very strong" evidence on the
#: scale of Kass & Raftery 1995, JASA 90, 773 (sect. 3.2: 2 ln B > 10)
DELTA_BIC = 10.0


def _harmonics_by_bic(t: np.ndarray, r: np.ndarray, err: np.ndarray, period: float, t_ref: float,
                      least: int) -> tuple[int, list[float]]:
    """Number of orbital harmonics (``least``..MAX_HARMONICS) that minimises the BIC of ``r``; the BICs.

    Chi-squares are divided by the reduced chi-square of the richest model, so an
    error scale that is off does not pass for variability (Schwarz 1978, Ann. Stat. 6, 461).
    """
    n = r.size
    w = 1.0 / err ** 2
    chi2 = []
    for h in range(MAX_HARMONICS + 1):
        X = np.column_stack([np.ones(n), (t - t.mean()) / max(np.ptp(t), 1e-9), fourier_columns(t, period, t_ref, h)])
        coef = np.linalg.lstsq(X * np.sqrt(w)[:, None], r * np.sqrt(w), rcond=None)[0]
        chi2.append(float(np.sum(w * (r - X @ coef) ** 2)))
    scale = chi2[-1] / max(1, n - 2 - 2 * MAX_HARMONICS)
    bic = [c / scale + 2 * h * math.log(n) for h, c in enumerate(chi2)]
    h_best = least + int(np.argmin(bic[least:]))
    # adopt extra harmonics only when they beat none by DELTA_BIC
    if h_best > 0 and least == 0 and bic[0] - bic[h_best] < DELTA_BIC:
        h_best = 0
    return h_best, bic, chi2[h_best] / max(1, n - 2 - 2 * h_best)


def choose_baseline(time: np.ndarray, rel_resid: np.ndarray, rel_err: np.ndarray, period: float, t_ref: float,
                    eclipse_duration: float, forced: str = "auto") -> dict[str, Any]:
    """The baseline the out-of-eclipse residuals of a polynomial-baseline fit call for.

    Parameters
    ----------
    time, rel_resid, rel_err : ndarray
        Out-of-eclipse points: times, residuals of the polynomial fit divided by its
        baseline, and the quoted relative errors.
    period, t_ref : float
        Ephemeris of the Fourier columns.
    eclipse_duration : float
        The longer eclipse's duration (days): the GP's timescale is kept above twice it.
    forced : {"auto", "fourier", "gp"}
        The user's choice ("fourier": at least one harmonic).

    Returns
    -------
    dict
        ``kind`` ("polynomial", "fourier" or "gp"), ``harmonics``, ``hyper`` (GP start or
        None), ``delta_bic_harmonics``, ``delta_bic_gp``, ``redchi_out`` (reduced chi-square
        of the residuals about the chosen harmonics, over ``n_out`` points) and a one-line ``note``.

    Notes
    -----
    1. Orbital harmonics: the number (0..4) minimising the BIC of a linear fit of the
       residuals (Schwarz 1978), kept only when it beats no harmonic by 10.
    2. Red noise: what remains is fitted with white noise (a jitter term) and with a GP
       (SHO kernel plus jitter; Foreman-Mackey et al. 2017) by maximum likelihood; the GP
       is adopted when its BIC is lower by more than 10 (3 extra parameters) and the
       residuals scatter more than the quoted errors allow (reduced chi-square above
       1 + 3 sqrt(2/n)).
    """
    n = rel_resid.size
    h, bic, redchi_out = _harmonics_by_bic(time, rel_resid, rel_err, period, t_ref, 1 if forced == "fourier" else 0)
    X = np.column_stack([np.ones(n), fourier_columns(time, period, t_ref, h)])
    w = 1 / rel_err ** 2
    coef = np.linalg.lstsq(X * np.sqrt(w)[:, None], rel_resid * np.sqrt(w), rcond=None)[0]
    rest = rel_resid - X @ coef
    var = rel_err ** 2
    rho_min = 2 * eclipse_duration
    rho_max = max(float(np.ptp(time)), 2 * rho_min)
    _, ll_white = fit_hyperparameters(time, rest, var, rho_min=rho_min, rho_max=rho_max, X=X[:, :1], gp=False)
    hyper, ll_gp = fit_hyperparameters(time, rest, var, rho_min=rho_min, rho_max=rho_max, X=X[:, :1],
                                       start={"rho": period})
    d_gp = 2 * (ll_gp - ll_white) - 3 * math.log(n)
    d_h = bic[0] - bic[h]
    # a correlated signal adds variance: residuals whose scatter matches the quoted errors (reduced chi-square
    # within 3 sigma of 1, its sampling scatter sqrt(2/n); common practice) call for no GP, whatever the BIC.
    # Without this test, white-noise light curves whose eclipses were poorly modelled got a GP (BIC 30-50
    # better) that took up the slow trends the misfit left in the per-segment polynomial
    excess = redchi_out > 1 + 3 * math.sqrt(2 / max(n, 1))
    kind = "gp" if forced == "gp" or (forced == "auto" and d_gp > DELTA_BIC and excess) else \
        "fourier" if h > 0 or forced == "fourier" else "polynomial"
    why = (f"{h} orbital harmonic(s): BIC lower by {d_h:.0f} than none" if h else
           "no orbital harmonic lowers the BIC by 10") + \
        (f"; GP vs white noise on what remains: BIC lower by {d_gp:.0f} (adopted above 10 when the residuals "
         f"scatter beyond their errors: reduced chi-square {redchi_out:.3f})")
    how = "chosen from the out-of-eclipse residuals" if forced == "auto" else f"baseline={forced!r} requested"
    label = {"polynomial": "polynomial per segment",
             "fourier": f"polynomial per segment + {h} orbital harmonic(s) (Fourier series in phase)",
             "gp": (f"polynomial per segment + {h} orbital harmonic(s) + Gaussian process (SHO kernel, "
                    "hyperparameters fitted)") if h else "polynomial per segment + Gaussian process (SHO kernel, "
                                                          "hyperparameters fitted)"}[kind]
    return {"kind": kind, "harmonics": h, "hyper": hyper if kind == "gp" else None,
            "delta_bic_harmonics": float(d_h), "delta_bic_gp": float(d_gp), "redchi_out": float(redchi_out),
            "n_out": int(n),
            "note": f"baseline: {label}, {how} ({why}); it multiplies the eclipse model"}
