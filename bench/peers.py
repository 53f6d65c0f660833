"""Python peers for `npm run bench` (run by bench/core.ts with /usr/bin/python3, one thread).

Input (written by bench/core.ts into a temporary directory): per-star dense arrays y, w (N x P, zero
where a band is missing; w = 1/sigma^2 with the same systematic floor as Starkiln), the true Teff, and
phi: band means of pi*B_lambda(T) for s = 1 on 1200 ln T nodes from 2000 to 50 000 K (P x 1200,
computed by direct integration through the same curves).

numpy peer (the strongest simple vectorised approach): for a chunk of stars at once,
  A = (w*y) @ phi.T, B = w @ (phi**2).T, chi2 = Syy - A^2/B on all 1200 nodes, argmin, parabolic
  refinement through the three nodes at the minimum; sigma(ln T) from the parabola's curvature,
  theta from s = A/B at the nearest node. One thread (OMP/OPENBLAS_NUM_THREADS=1 set by the caller).
scipy peer: scipy.optimize.least_squares per star over (ln T, ln s), band means by np.interp of ln phi,
  started at 5800 K; run on a subset and extrapolated (clearly labelled by the caller).
Prints one JSON line.
"""
import json
import os
import sys
import time

import numpy as np
import scipy
from scipy.optimize import least_squares

MAS_PER_RAD = 206264806.247


def main(d):
    meta = json.load(open(os.path.join(d, "meta.json")))
    n, p, nodes = meta["stars"], meta["bands"], meta["nodes"]
    y = np.fromfile(os.path.join(d, "y.f64")).reshape(n, p)
    w = np.fromfile(os.path.join(d, "w.f64")).reshape(n, p)
    phi = np.fromfile(os.path.join(d, "phi.f64")).reshape(p, nodes)
    truth = np.fromfile(os.path.join(d, "truth.f64"))
    u = np.linspace(meta["uMin"], meta["uMax"], nodes)
    h = u[1] - u[0]
    phi2 = phi * phi

    # numpy peer
    teff = np.empty(n)
    teff_err = np.empty(n)
    theta = np.empty(n)
    t0 = time.perf_counter()
    cpu0 = time.process_time()
    chunk = 4096
    for a in range(0, n, chunk):
        b = min(n, a + chunk)
        wc = w[a:b]
        wy = wc * y[a:b]
        syy = np.einsum("ij,ij->i", wy, y[a:b])
        A = wy @ phi  # (m, nodes)
        B = wc @ phi2  # (m, nodes)
        chi = syy[:, None] - A * A / B
        k = np.clip(np.argmin(chi, axis=1), 1, nodes - 2)
        r = np.arange(b - a)
        c0 = chi[r, k - 1]
        c1 = chi[r, k]
        c2 = chi[r, k + 1]
        den = c0 - 2 * c1 + c2
        with np.errstate(divide="ignore", invalid="ignore"):
            dk = np.clip(0.5 * (c0 - c2) / den, -1, 1)
            uf = u[k] + dk * h
            sig_u = np.sqrt(2.0 * h * h / den)
        s = A[r, k] / B[r, k]
        teff[a:b] = np.exp(uf)
        teff_err[a:b] = teff[a:b] * sig_u
        theta[a:b] = 2 * np.sqrt(np.maximum(s, 0)) * MAS_PER_RAD
    t_np = time.perf_counter() - t0
    c_np = time.process_time() - cpu0
    np_rel = float(np.nanmedian(np.abs(teff / truth - 1)))

    # scipy peer (subset)
    m = min(n, meta["scipySubset"])
    lnphi = np.log(phi)
    t0 = time.perf_counter()
    cpu0 = time.process_time()
    fails = 0
    teff_sp = np.full(m, np.nan)
    for i in range(m):
        sel = w[i] > 0
        yi = y[i, sel]
        si = 1 / np.sqrt(w[i, sel])
        lp = lnphi[sel]

        def resid(x):
            ph = np.array([np.exp(np.interp(x[0], u, row)) for row in lp])
            return (yi - np.exp(x[1]) * ph) / si

        u0 = np.log(5800.0)
        ph0 = np.array([np.exp(np.interp(u0, u, row)) for row in lp])
        s0 = np.sum(yi * ph0 / si**2) / np.sum(ph0 * ph0 / si**2)
        try:
            res = least_squares(resid, [u0, np.log(max(s0, 1e-300))], method="lm")
            if res.success:
                teff_sp[i] = np.exp(res.x[0])
            else:
                fails += 1
        except Exception:
            fails += 1
    t_sp = time.perf_counter() - t0
    c_sp = time.process_time() - cpu0
    sp_rel = float(np.nanmedian(np.abs(teff_sp / truth[:m] - 1)))
    out = {
        "numpy": {"seconds": t_np, "cpuSeconds": c_np, "fitsPerSec": n / t_np, "medianRelErr": np_rel},
        "scipy": {"subset": m, "seconds": t_sp, "cpuSeconds": c_sp, "fitsPerSec": m / t_sp, "medianRelErr": sp_rel, "failures": fails},
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__, "python": sys.version.split()[0]},
    }
    print(json.dumps(out))


if __name__ == "__main__":
    main(sys.argv[1])
