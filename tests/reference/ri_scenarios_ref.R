# Reference for scenarios of the village random-intercept model, computed in R (r-base-core) by
# direct numerical integration with integrate(), independently of the engine's quadrature, at the
# engine's estimates theta = (beta, sigma) and their covariance V; run by
# tests/unit/engine/ri-scenarios.test.ts.
# Overall: averaged over the village effect, F*(t) = E_u F(t + sigma u), u ~ N(0, 1) (probit:
#   pnorm(t / sqrt(1 + sigma^2)) exactly); the change's delta-method SE with a central-difference
#   gradient over theta.
# By village: the posterior of u_j given the village's farms, L_j(u) phi(u) / integral; posterior
#   mean and SD of mean_i [F(eta_s + sigma u) - F(eta + sigma u)], and the posterior mean baseline.
# Input: JSON list of {id, link, k, X, Xs (row-major), y, g, theta, V (row-major)}.
suppressPackageStartupMessages(library(jsonlite))
args <- commandArgs(trailingOnly = TRUE)
cases <- fromJSON(args[1], simplifyVector = FALSE)
out <- lapply(cases, function(cs) {
  n <- length(cs$y); k <- cs$k; K <- k + 1
  X <- matrix(unlist(cs$X), nrow = n, ncol = k, byrow = TRUE)
  Xs <- matrix(unlist(cs$Xs), nrow = n, ncol = k, byrow = TRUE)
  y <- unlist(cs$y); g <- unlist(cs$g)
  theta <- unlist(cs$theta)
  V <- matrix(unlist(cs$V), K, K, byrow = TRUE)
  Fl <- if (cs$link == "probit") pnorm else plogis
  Fstar <- function(t, s) {
    if (cs$link == "probit") return(pnorm(t / sqrt(1 + s^2)))
    vapply(t, function(ti) integrate(function(u) plogis(ti + s * u) * dnorm(u), -Inf, Inf, rel.tol = 1e-12)$value, 0)
  }
  delta <- function(th) {
    b <- th[1:k]; s <- th[K]
    mean(Fstar(drop(Xs %*% b), s) - Fstar(drop(X %*% b), s))
  }
  d0 <- delta(theta)
  grad <- vapply(seq_len(K), function(j) {
    h <- 1e-5 * max(1, abs(theta[j])); up <- theta; dn <- theta
    up[j] <- up[j] + h; dn[j] <- dn[j] - h
    (delta(up) - delta(dn)) / (2 * h)
  }, 0)
  b <- theta[1:k]; s <- theta[K]
  eta <- drop(X %*% b); etas <- drop(Xs %*% b)
  villages <- lapply(sort(unique(g)), function(v) {
    i <- which(g == v)
    # The likelihood relative to its value at the best u on a grid, to keep it away from underflow.
    ll <- function(u) vapply(u, function(uu) sum(dbinom(y[i], 1, Fl(eta[i] + s * uu), log = TRUE)), 0)
    grid <- seq(-8, 8, by = 0.01); top <- max(ll(grid) + dnorm(grid, log = TRUE))
    post <- function(u) exp(ll(u) + dnorm(u, log = TRUE) - top)
    hfun <- function(u) vapply(u, function(uu) mean(Fl(etas[i] + s * uu) - Fl(eta[i] + s * uu)), 0)
    bfun <- function(u) vapply(u, function(uu) mean(Fl(eta[i] + s * uu)), 0)
    int <- function(f) integrate(function(u) f(u) * post(u), -Inf, Inf, rel.tol = 1e-12, subdivisions = 1000L)$value
    z <- int(function(u) 1)
    m1 <- int(hfun) / z
    m2 <- int(function(u) hfun(u)^2) / z
    list(village = v, baseline = int(bfun) / z, estimate = m1, se = sqrt(max(0, m2 - m1^2)))
  })
  list(id = cs$id, overall = list(baseline = mean(Fstar(eta, s)), estimate = d0, se = sqrt(drop(t(grad) %*% V %*% grad))),
       villages = villages)
})
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE), args[2])
