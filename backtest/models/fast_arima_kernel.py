"""Compiled exact Gaussian likelihood of a stationary ARMA model with a regression mean.

The differenced series ``w`` of an ARIMA model is a stationary ARMA process around
``X beta`` (``X``: the deterministic regressor differenced like the data, or no column).
Its exact likelihood is computed by a Kalman filter over Harvey's state (dimension
``r = max(p, q + 1)``, transition with the AR coefficients in the first column and ones
above the diagonal, disturbance loading ``(1, theta_1, ..., theta_{r-1})``), started
from the stationary covariance (Durbin & Koopman 2012, section 3.4; Harvey 1989,
section 3.4); its covariance is carried by the Chandrasekhar recursions (O(r) per
step, see :func:`filter_errors`). Once the covariance stops changing the filter
continues with the steady gain. With the filter run at unit variance, ``beta`` (GLS) and
the innovation variance are concentrated out (Harvey 1989, section 3.4.2): the profile
log-likelihood is

    -n/2 (log 2 pi + 1 + log sigma2_hat) - 1/2 sum log F_t.

Parameters reach the filter through Monahan's (1984) map of unconstrained values to
stationary (invertible) coefficients, the map statsmodels' SARIMAX uses.

The functions are compiled by numba on first use and cached on disk (:mod:`.compiled`).

References
----------
Durbin, J. and Koopman, S. J. (2012). *Time Series Analysis by State Space Methods*,
2nd ed., Oxford University Press.
Harvey, A. C. (1989). *Forecasting, Structural Time Series Models and the Kalman Filter*.
Cambridge University Press.
Herbst, E. (2015). Using the "Chandrasekhar recursions" for likelihood evaluation of DSGE
models. *Computational Economics* 45(4).
Monahan, J. F. (1984). A note on enforcing stationarity in autoregressive-moving average
models. *Biometrika* 71(2), 403-404.
Morf, M., Sidhu, G. S. and Kailath, T. (1974). Some new algorithms for recursive
estimation in constant, linear, discrete-time systems. *IEEE Transactions on Automatic
Control* 19(4), 315-323.
"""

from __future__ import annotations

import numpy as np

from backtest.models.compiled import njit

#: Largest element change of the state covariance at which the filter turns steady.
STEADY_TOLERANCE = 1e-13


@njit
def constrain(unconstrained: np.ndarray) -> np.ndarray:
    """Monahan's map: ``c`` with ``1 - c_1 z - ... - c_k z^k`` stationary."""
    n = unconstrained.shape[0]
    y = np.zeros((n, n))
    r = unconstrained / np.sqrt(1.0 + unconstrained ** 2)
    for k in range(n):
        for i in range(k):
            y[k, i] = y[k - 1, i] + r[k] * y[k - 1, k - i - 1]
        y[k, k] = r[k]
    out = np.empty(n)
    for i in range(n):
        out[i] = -y[n - 1, i]
    return out


@njit
def expand(x: np.ndarray, p: int, q: int, big_p: int, big_q: int, s: int
           ) -> tuple[np.ndarray, np.ndarray]:
    """Full AR and MA coefficients of the multiplicative model at unconstrained ``x``
    (p AR, q MA, P seasonal AR and Q seasonal MA values in that order)."""
    return multiply(constrain(x[:p]), -constrain(x[p:p + q]),
                    constrain(x[p + q:p + q + big_p]),
                    -constrain(x[p + q + big_p:p + q + big_p + big_q]), s)


@njit
def multiply(phi: np.ndarray, theta: np.ndarray, big_phi: np.ndarray, big_theta: np.ndarray,
             s: int) -> tuple[np.ndarray, np.ndarray]:
    """Full AR and MA coefficients of ``(1 - phi(B))(1 - Phi(B^s)) y = (1 + theta(B))
    (1 + Theta(B^s)) e``: ``y_t = sum ar_k y_{t-k} + e_t + sum ma_k e_{t-k}``."""
    p, q, big_p, big_q = phi.shape[0], theta.shape[0], big_phi.shape[0], big_theta.shape[0]
    ar = np.zeros(p + big_p * s)
    ma = np.zeros(q + big_q * s)
    for i in range(p + 1):
        a = 1.0 if i == 0 else -phi[i - 1]
        for j in range(big_p + 1):
            b = 1.0 if j == 0 else -big_phi[j - 1]
            k = i + j * s
            if k > 0:
                ar[k - 1] -= a * b
    for i in range(q + 1):
        a = 1.0 if i == 0 else theta[i - 1]
        for j in range(big_q + 1):
            b = 1.0 if j == 0 else big_theta[j - 1]
            k = i + j * s
            if k > 0:
                ma[k - 1] += a * b
    return ar, ma


@njit
def stationary_cov(phi: np.ndarray, loading: np.ndarray) -> np.ndarray:
    """Stationary covariance of Harvey's state at unit innovation variance.

    ``phi`` and ``loading`` (``(1, theta_1, ...)``) have the state's length ``r``. The
    first row is :func:`stationary_first_row`; the rest comes from the element-wise
    Lyapunov equation ``P_ij = phi_i phi_j g0 + R_i R_j + phi_i P_1,j+1 + phi_j P_1,i+1 +
    P_i+1,j+1`` filled from the bottom right corner.
    """
    r = phi.shape[0]
    cov = np.zeros((r, r))
    first = stationary_first_row(phi, loading)
    cov[0, :] = first
    cov[:, 0] = first
    for i in range(r - 1, 0, -1):
        for j in range(r - 1, i - 1, -1):
            value = phi[i] * phi[j] * first[0] + loading[i] * loading[j]
            value += phi[i] * (cov[0, j + 1] if j + 1 < r else 0.0)
            value += phi[j] * (cov[0, i + 1] if i + 1 < r else 0.0)
            value += cov[i + 1, j + 1] if j + 1 < r else 0.0
            cov[i, j] = value
            cov[j, i] = value
    return cov


@njit
def stationary_first_row(phi: np.ndarray, loading: np.ndarray) -> np.ndarray:
    """The first row of the stationary state covariance (``E[y_t alpha_t]``), from the
    autocovariances ``g`` and the psi weights: ``P_1,i = sum_{m>=i} phi_m g(m-i+1) +
    sum_{m>=i-1} theta_m psi_{m-i+1}``, ``P_1,1 = g(0)``."""
    r = phi.shape[0]
    n_ar = 0
    for k in range(r):
        if phi[k] != 0.0:
            n_ar = k + 1
    psi = np.zeros(r + 1)
    for j in range(r + 1):
        value = 1.0 if j == 0 else (loading[j] if j < r else 0.0)
        for k in range(1, min(j, n_ar) + 1):
            value += phi[k - 1] * psi[j - k]
        psi[j] = value
    # right-hand sides sum_{j>=h} theta_j psi_{j-h}, theta_0 = 1
    rhs = np.zeros(r + 1)
    for h in range(r + 1):
        total = 0.0
        for j in range(h, r):
            total += loading[j] * psi[j - h]
        rhs[h] = total
    gamma = np.zeros(r + 1)
    m = n_ar + 1
    a = np.zeros((m, m))
    for h in range(m):
        a[h, h] += 1.0
        for k in range(1, n_ar + 1):
            a[h, abs(h - k)] -= phi[k - 1]
    solved = _solve(a, rhs[:m].copy())
    for h in range(m):
        gamma[h] = solved[h]
    for h in range(m, r + 1):
        value = rhs[h]
        for k in range(1, n_ar + 1):
            value += phi[k - 1] * gamma[h - k]
        gamma[h] = value
    first = np.zeros(r)
    first[0] = gamma[0]
    for i in range(1, r):
        total = 0.0
        for k in range(i, r):
            total += phi[k] * gamma[k - i + 1]
        for k in range(i, r):
            total += loading[k] * psi[k - i]
        first[i] = total
    return first


@njit
def _solve(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a^-1 b`` by Gaussian elimination with partial pivoting, in place (the systems are
    small: a LAPACK call costs more than the arithmetic)."""
    m = b.shape[0]
    for k in range(m):
        pivot = k
        for i in range(k + 1, m):
            if abs(a[i, k]) > abs(a[pivot, k]):
                pivot = i
        if pivot != k:
            for j in range(k, m):
                a[k, j], a[pivot, j] = a[pivot, j], a[k, j]
            b[k], b[pivot] = b[pivot], b[k]
        for i in range(k + 1, m):
            factor = a[i, k] / a[k, k]
            for j in range(k, m):
                a[i, j] -= factor * a[k, j]
            b[i] -= factor * b[k]
    for k in range(m - 1, -1, -1):
        total = b[k]
        for j in range(k + 1, m):
            total -= a[k, j] * b[j]
        b[k] = total / a[k, k]
    return b


@njit
def filter_sums(w: np.ndarray, x: np.ndarray, ar: np.ndarray, ma: np.ndarray
                ) -> tuple[float, float, float, float]:
    """Kalman filter of ``w`` and of the regressor ``x`` at unit variance.

    Returns ``sum log F_t``, ``sum v_w^2 / F``, ``sum v_w v_x / F`` and ``sum v_x^2 / F``
    (``x`` of zeros gives zero regression sums). Non-finite output marks a failure.
    """
    return filter_errors(w, x, ar, ma, np.empty(0))


@njit
def one_step_errors(w: np.ndarray, ar: np.ndarray, ma: np.ndarray) -> np.ndarray:
    """The filter's one-step prediction errors ``v_t`` of ``w`` (the same at any
    innovation variance); NaN throughout where the filter fails."""
    errors = np.empty(w.shape[0])
    sums = filter_errors(w, np.zeros_like(w), ar, ma, errors)
    if not np.isfinite(sums[0]):
        errors[:] = np.nan
    return errors


@njit
def filter_errors(w: np.ndarray, x: np.ndarray, ar: np.ndarray, ma: np.ndarray,
                  errors: np.ndarray) -> tuple[float, float, float, float]:
    """:func:`filter_sums`, also writing each one-step error of ``w`` to ``errors`` when
    that has ``w``'s length (an empty array: sums only).

    The covariance is carried by the Chandrasekhar recursions (Morf, Sidhu & Kailath
    1974; in the form Herbst 2015 gives them) rather than the Riccati equation: from
    the stationary start the covariance changes by a rank-one term ``m_t d_t d_t'``, so
    with ``F_t`` the prediction-error variance and ``K_t = T P_t e1 / F_t`` the gain,

        F_{t+1} = F_t + m_t d_t1^2,   K_{t+1} = (K_t F_t + m_t d_t1 T d_t) / F_{t+1},
        m_{t+1} = m_t F_{t+1} / F_t,  d_{t+1} = T d_t - K_{t+1} d_t1,

    from ``d_1 = K_1``, ``m_1 = -F_1``: O(r) work per step instead of O(r^2). Only the
    first row of the stationary covariance is needed (:func:`stationary_first_row`).
    """
    keep = errors.shape[0] == w.shape[0]
    n = w.shape[0]
    r = max(ar.shape[0], ma.shape[0] + 1)
    phi = np.zeros(r)
    phi[:ar.shape[0]] = ar
    loading = np.zeros(r)
    loading[0] = 1.0
    loading[1:ma.shape[0] + 1] = ma
    first = stationary_first_row(phi, loading)
    f = first[0]
    if not f > 0.0:
        return np.nan, np.nan, np.nan, np.nan
    gain = np.zeros(r)  # K_t = T P_t e1 / F_t: (T v)_i = phi_i v_0 + v_{i+1}
    for i in range(r - 1):
        gain[i] = (phi[i] * first[0] + first[i + 1]) / f
    gain[r - 1] = phi[r - 1] * first[0] / f
    lead = gain.copy()  # d_t
    scale = -f  # m_t
    shifted = np.zeros(r)  # T d_t
    a_w = np.zeros(r)
    a_x = np.zeros(r)
    sum_log_f = 0.0
    s_ww = 0.0
    s_wx = 0.0
    s_xx = 0.0
    steady = False
    for t in range(n):
        v_w = w[t] - a_w[0]
        v_x = x[t] - a_x[0]
        if keep:
            errors[t] = v_w
        sum_log_f += np.log(f)
        s_ww += v_w * v_w / f
        s_wx += v_w * v_x / f
        s_xx += v_x * v_x / f
        # a_{t+1} = T a_t + K_t v_t
        first_w = a_w[0]
        first_x = a_x[0]
        for i in range(r - 1):
            a_w[i] = phi[i] * first_w + a_w[i + 1] + gain[i] * v_w
            a_x[i] = phi[i] * first_x + a_x[i + 1] + gain[i] * v_x
        a_w[r - 1] = phi[r - 1] * first_w + gain[r - 1] * v_w
        a_x[r - 1] = phi[r - 1] * first_x + gain[r - 1] * v_x
        if steady:
            continue
        # the covariance's change P_{t+1} - P_t = m_t d_t d_t'
        change = 0.0
        for i in range(r):
            change = max(change, lead[i] * lead[i])
        change *= abs(scale)
        head = lead[0]
        f_next = f + scale * head * head
        if not f_next > 0.0:
            return np.nan, np.nan, np.nan, np.nan
        for i in range(r - 1):
            shifted[i] = phi[i] * head + lead[i + 1]
        shifted[r - 1] = phi[r - 1] * head
        for i in range(r):
            gain[i] = (gain[i] * f + shifted[i] * scale * head) / f_next
            lead[i] = shifted[i] - gain[i] * head
        scale *= f_next / f
        f = f_next
        steady = change < STEADY_TOLERANCE * max(1.0, abs(f))
    return sum_log_f, s_ww, s_wx, s_xx


@njit
def profile_loglike(x: np.ndarray, w: np.ndarray, reg: np.ndarray, p: int, q: int,
                    big_p: int, big_q: int, s: int) -> tuple[float, float, float]:
    """Log-likelihood at unconstrained ``x`` with the mean (when ``reg`` is not all zero)
    and the variance concentrated out; also returns ``beta`` and ``sigma2``."""
    ar, ma = expand(x, p, q, big_p, big_q, s)
    sum_log_f, s_ww, s_wx, s_xx = filter_sums(w, reg, ar, ma)
    beta = s_wx / s_xx if s_xx > 0.0 else 0.0
    sse = s_ww - beta * s_wx
    n = w.shape[0]
    sigma2 = sse / n
    if not (sigma2 > 0.0 and np.isfinite(sum_log_f)):
        return -np.inf, beta, sigma2
    llf = -0.5 * n * (np.log(2.0 * np.pi) + 1.0 + np.log(sigma2)) - 0.5 * sum_log_f
    return llf, beta, sigma2


@njit
def objective(x: np.ndarray, gradient: np.ndarray, w: np.ndarray, reg: np.ndarray, p: int,
              q: int, big_p: int, big_q: int, s: int, step: float) -> float:
    """Minus the profile log-likelihood per observation; its central-difference gradient
    (step ``step`` in every unconstrained coordinate) is written to ``gradient``."""
    n = w.shape[0]
    value = -profile_loglike(x, w, reg, p, q, big_p, big_q, s)[0] / n
    if not np.isfinite(value):
        gradient[:] = 0.0
        return 1e300
    probe = x.copy()
    for i in range(x.shape[0]):
        probe[i] = x[i] + step
        f_up = -profile_loglike(probe, w, reg, p, q, big_p, big_q, s)[0] / n
        probe[i] = x[i] - step
        f_down = -profile_loglike(probe, w, reg, p, q, big_p, big_q, s)[0] / n
        probe[i] = x[i]
        gradient[i] = (f_up - f_down) / (2.0 * step)
    return float(value)
