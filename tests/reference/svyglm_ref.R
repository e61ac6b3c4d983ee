# Reference fits for the survey-design covariance: survey::svyglm with
# family = quasibinomial(link), run by tests/unit/engine/survey.test.ts.
# Input: a JSON list of cases {id, link, k, X (row-major, first column 1), y, w,
# psu (or null: each row its own PSU), strata (or null), fpc (or null)}.
# Output: coefficients, linearisation SEs and the design degrees of freedom.
suppressPackageStartupMessages({ library(survey); library(jsonlite) })
# A stratum with one PSU: its total about the grand mean (what the engine does, with a warning).
options(survey.lonely.psu = "adjust")
args <- commandArgs(trailingOnly = TRUE)
cases <- fromJSON(args[1], simplifyVector = FALSE)
out <- lapply(cases, function(cs) {
  n <- length(cs$y); k <- cs$k
  X <- matrix(unlist(cs$X), nrow = n, ncol = k, byrow = TRUE)
  d <- data.frame(y = unlist(cs$y), w = unlist(cs$w))
  d$X <- X
  ids <- ~1
  if (!is.null(cs$psu)) { d$psu <- unlist(cs$psu); ids <- ~psu }
  strata <- NULL
  if (!is.null(cs$strata)) { d$strata <- unlist(cs$strata); strata <- ~strata }
  fpc <- NULL
  if (!is.null(cs$fpc)) { d$fpc <- unlist(cs$fpc); fpc <- ~fpc }
  des <- svydesign(ids = ids, strata = strata, weights = ~w, fpc = fpc, nest = TRUE, data = d)
  m <- svyglm(y ~ 0 + X, design = des, family = quasibinomial(link = cs$link),
              control = glm.control(epsilon = 1e-14, maxit = 100))
  list(id = cs$id, coef = unname(coef(m)), se = unname(sqrt(diag(vcov(m)))), df = degf(des))
})
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE), args[2])
