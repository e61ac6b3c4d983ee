"""Outside reference for the engine's differential test (run with Debian's /usr/bin/python3).

Usage: python3 statsmodels_diff.py IN.json OUT.json
IN: list of designs {id, link, n, k, X (row-major, first column the intercept), y, w, groups}.
Unweighted designs: statsmodels Probit/Logit Newton fits; SEs nonrobust, HC0 and cluster
(default CR1 correction); AME via get_margeff (every column continuous).
Weighted designs: GLM Binomial with freq_weights (the same point estimates as our
pweighted likelihood); covariance inv(-observed Hessian) and the sandwich built from
GLM.score_obs (which includes the weights) -- statsmodels' own robust covariances for
freq_weights follow a frequency convention and are not what a pweights sandwich is.
"""
import json
import sys

import numpy as np
import statsmodels.api as sm

designs = json.load(open(sys.argv[1]))
out = []
for d in designs:
    n, k = d["n"], d["k"]
    X = np.array(d["X"], dtype=float).reshape(n, k)
    y = np.array(d["y"], dtype=float)
    groups = np.array(d["groups"]) if d["groups"] is not None else None
    res = {"id": d["id"]}
    if d["w"] is None:
        model = (sm.Probit if d["link"] == "probit" else sm.Logit)(y, X)
        r = model.fit(method="newton", tol=1e-12, maxiter=100, disp=0)
        res["params"] = r.params.tolist()
        res["se"] = r.bse.tolist()
        res["hc0"] = model.fit(method="newton", tol=1e-12, maxiter=100, disp=0, cov_type="HC0").bse.tolist()
        if groups is not None:
            rc = model.fit(method="newton", tol=1e-12, maxiter=100, disp=0, cov_type="cluster", cov_kwds={"groups": groups})
            res["cluster"] = rc.bse.tolist()
        m = r.get_margeff(at="overall", method="dydx")
        res["ame"] = m.margeff.tolist()
        res["ame_se"] = m.margeff_se.tolist()
        res["llf"] = float(r.llf)
        res["llnull"] = float(r.llnull)
    else:
        w = np.array(d["w"], dtype=float)
        link = sm.families.links.probit() if d["link"] == "probit" else sm.families.links.logit()
        model = sm.GLM(y, X, family=sm.families.Binomial(link=link), freq_weights=w)
        r = model.fit(tol=1e-13, maxiter=200)
        p = r.params
        H = model.hessian(p)
        A = np.linalg.inv(-H)
        S = model.score_obs(p)
        res["params"] = p.tolist()
        res["se"] = np.sqrt(np.diag(A)).tolist()
        res["hc0"] = np.sqrt(np.diag(A @ (S.T @ S) @ A)).tolist()
        if groups is not None:
            labels = np.unique(groups)
            U = np.array([S[groups == g].sum(axis=0) for g in labels])
            G = len(labels)
            c = G / (G - 1) * (n - 1) / (n - k)
            res["cluster"] = np.sqrt(np.diag(c * A @ (U.T @ U) @ A)).tolist()
        res["llf"] = float(r.llf)
        w1 = float((w * y).sum())
        w0 = float((w * (1 - y)).sum())
        res["llnull"] = w1 * np.log(w1 / (w1 + w0)) + w0 * np.log(w0 / (w1 + w0))
    out.append(res)
json.dump(out, open(sys.argv[2], "w"))
