# Reference for the design-adjusted goodness-of-fit test (Archer & Lemeshow 2006) with R's survey
# package (Debian r-cran-survey), run by tests/unit/engine/design-gof.test.ts.
# survey has no function for this test (its svygofchisq tests a one-way table against given
# proportions), so the statistic is built from survey's own pieces, independently of the engine:
#   the model by svyglm(quasibinomial(link)), residuals y − fitted, groups of the weighted fitted
#   probabilities, the groups' weighted mean residuals and their linearisation covariance from
#   svyglm(r ~ 0 + group) on the same design, and the Wald statistic from regTermTest(method = "Wald").
# Input: a JSON list of cases {id, link, k, X (row-major, first column 1), y, w, psu (or null),
#   strata (or null), fpc (or null), groups}. Output per case: coefficients, group means and SEs,
#   W, F = (f − g + 2) W / (f g) on (g − 1, f − g + 2), its p, and the design df f.
suppressPackageStartupMessages({ library(survey); library(jsonlite) })
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
  p <- as.numeric(fitted(m))
  G <- cs$groups
  # Groups of the weighted distribution of p: ceiling(G * cumulative weight / total), ties together.
  o <- order(p)
  cw <- cumsum(d$w[o])
  cw <- ave(cw, p[o], FUN = max)
  g <- integer(n)
  g[o] <- pmin(G, pmax(1, ceiling(G * cw / sum(d$w) - 1e-9)))
  des <- update(des, r = d$y - p, grp = factor(g))
  mr <- svyglm(r ~ 0 + grp, design = des)
  tt <- regTermTest(mr, ~grp, df = Inf, method = "Wald")
  W <- unname(tt$chisq)
  if (is.null(W)) W <- unname(tt$Ftest * tt$df)
  f <- degf(des); ng <- length(coef(mr))
  Fstat <- (f - ng + 2) * W / (f * ng)
  list(id = cs$id, coef = unname(coef(m)), means = unname(coef(mr)), se = unname(sqrt(diag(vcov(mr)))),
       wald = W, F = Fstat, numDf = ng - 1, denDf = f - ng + 2, p = pf(Fstat, ng - 1, f - ng + 2, lower.tail = FALSE),
       df = f, sizes = as.integer(table(g)))
})
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE), args[2])
