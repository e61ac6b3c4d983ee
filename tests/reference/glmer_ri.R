# Reference fits for the village random-intercept model: lme4::glmer with adaptive
# Gauss-Hermite quadrature (nAGQ points), run by tests/unit/engine/random-intercept.test.ts.
# Input: a JSON list of cases {id, link, nAGQ, k, X (row-major, first column 1), y, g,
# ours: {beta, sigma} or null}. Output: per case the glmer estimates, log-likelihood,
# conditional modes, and glmer's own deviance function evaluated at OUR estimates (so
# the likelihood itself is compared at identical parameters, apart from the optimiser).
suppressPackageStartupMessages({ library(lme4); library(jsonlite) })
args <- commandArgs(trailingOnly = TRUE)
cases <- fromJSON(args[1], simplifyVector = FALSE)
ctrl <- glmerControl(optimizer = "bobyqa", optCtrl = list(rhoend = 1e-10, maxfun = 1e5),
                     tolPwrss = 1e-12, calc.derivs = FALSE, check.conv.singular = "ignore")
out <- lapply(cases, function(cs) {
  n <- length(cs$y); k <- cs$k
  X <- matrix(unlist(cs$X), nrow = n, ncol = k, byrow = TRUE)
  d <- data.frame(y = unlist(cs$y), g = factor(unlist(cs$g)))
  d$X <- X
  fam <- binomial(link = cs$link)
  started <- proc.time()[["elapsed"]]
  m <- glmer(y ~ 0 + X + (1 | g), data = d, family = fam, nAGQ = cs$nAGQ, control = ctrl)
  seconds <- proc.time()[["elapsed"]] - started
  res <- list(id = cs$id, beta = unname(fixef(m)), sigma = unname(getME(m, "theta")),
              loglik = as.numeric(logLik(m)), seconds = seconds,
              modes = unname(ranef(m)$g[levels(d$g), 1]), levels = levels(d$g))
  if (!is.null(cs$ours)) {
    dev <- glmer(y ~ 0 + X + (1 | g), data = d, family = fam, nAGQ = cs$nAGQ, control = ctrl, devFunOnly = TRUE)
    res$loglikAtOurs <- -dev(c(cs$ours$sigma, unlist(cs$ours$beta))) / 2
  }
  res
})
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE), args[2])
