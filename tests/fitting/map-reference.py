# The reference for the MAP case of independent.test.ts: samples/orvanix-fit.json fitted by
# SciPy's least_squares (run with SciPy 1.17.1; its values are recorded in the test). Independent
# of Tidemark: the model is the closed form of the one-compartment oral model summed over the
# doses (Gibaldi & Perrier, Pharmacokinetics, 2nd ed., eq. 1.61, superposition), the prior the
# log-normal one with d = L·u (L the Cholesky factor of the correlations), the residual SD
# sqrt(a² + (b·f)²) renewed from the predictions until it settles. Run: python3 map-reference.py
import numpy as np
import scipy
from scipy.optimize import least_squares

dose = 500 * 0.8  # amount × bioavailability
doses = [0, 12, 24, 36, 48]  # h after 2026-03-04T08:00, every 12 h through 2026-03-06T08:00
t = np.array([2 + 10 / 60, 11 + 50 / 60, 23.75, 26 + 5 / 60, 47 + 40 / 60])  # the five measured levels
y = np.array([8.9, 3.5, 5.4, 11.6, 6.0])  # mg/L (the sixth, below the limit, is left out)
typical = np.array([3.6, 38, 1.1])  # CL L/h, V L, ka 1/h
cv = np.array([0.3, 0.25, 0.4])
spread = np.sqrt(np.log(1 + cv**2))
L = np.linalg.cholesky(np.array([[1, 0.3, 0], [0.3, 1, 0], [0, 0, 1]]))


def values(u):
    return typical * np.exp(spread * (L @ u))


def predict(u):
    cl, v, ka = values(u)
    k = cl / v
    c = np.zeros_like(t)
    for d in doses:
        dt = t - d
        m = dt > 0
        c[m] += dose * ka / (v * (ka - k)) * (np.exp(-k * dt[m]) - np.exp(-ka * dt[m]))
    return c


def sd(c):
    return np.sqrt(0.2**2 + (0.1 * c) ** 2)


def solve(u, w):
    return least_squares(lambda u: np.concatenate([(predict(u) - y) / w, u]), u, xtol=1e-15, ftol=1e-15, gtol=1e-15)


u, w = np.zeros(3), sd(y)
for _ in range(50):
    u = solve(u, w).x
    renewed = sd(predict(u))
    settled = np.max(np.abs(renewed / w - 1)) < 1e-10
    w = renewed
    if settled:
        break
r = solve(u, w)
covariance = L @ np.linalg.inv(r.jac.T @ r.jac) @ L.T  # of d = L·u
v = values(r.x)
print('SciPy', scipy.__version__)
print('CL V ka', v)
print('standard errors', v * spread * np.sqrt(np.diag(covariance)))  # delta method on the log scale
print('objective', 2 * r.cost)
