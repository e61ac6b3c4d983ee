# Second implementations for the model checks, run by tests/unit/engine/checks.test.ts:
# - link test: stats::glm of y on the fitted index and its square (binomial family), with
#   observed-information SEs from stats::optimHess for the probit;
# - heteroskedastic probit: the log-likelihood sum(log pnorm((2y - 1) x'b / exp(z'g)))
#   written here afresh with its analytic gradient, maximised by stats::optim (BFGS),
#   standard errors from stats::optimHess; plus the LR test against glm's probit.
# Input: JSON list of cases {id, link, k, m, X (row-major, first column 1), Z (row-major), y}.
suppressPackageStartupMessages(library(jsonlite))
args <- commandArgs(trailingOnly = TRUE)
cases <- fromJSON(args[1], simplifyVector = FALSE)
out <- lapply(cases, function(cs) {
  n <- length(cs$y); k <- cs$k; m <- cs$m
  X <- matrix(unlist(cs$X), nrow = n, ncol = k, byrow = TRUE)
  Z <- matrix(unlist(cs$Z), nrow = n, ncol = m, byrow = TRUE)
  y <- unlist(cs$y)
  fam <- binomial(link = cs$link)
  base <- glm(y ~ 0 + X, family = fam, control = glm.control(epsilon = 1e-14, maxit = 100))
  hat <- drop(X %*% coef(base))
  lt <- glm(y ~ hat + I(hat^2), family = fam, control = glm.control(epsilon = 1e-14, maxit = 100))
  st <- summary(lt)$coefficients
  ltSe <- unname(st[, 2])
  if (cs$link == "probit") {
    # glm's SEs use the expected information; the engine uses the observed one, so the
    # probit link test's SEs come from optimHess on the log-likelihood written here.
    H <- cbind(1, hat, hat^2); q <- 2 * y - 1
    lnll <- function(th) -sum(pnorm(q * drop(H %*% th), log.p = TRUE))
    lngr <- function(th) {
      e <- q * drop(H %*% th)
      -colSums(q * exp(dnorm(e, log = TRUE) - pnorm(e, log.p = TRUE)) * H)
    }
    ltSe <- unname(sqrt(diag(solve(optimHess(coef(lt), lnll, lngr, control = list(ndeps = rep(1e-6, 3)))))))
  }
  res <- list(id = cs$id, linkTest = list(coef = unname(coef(lt)), se = ltSe))
  if (cs$link == "probit") {
    q <- 2 * y - 1
    nll <- function(th) {
      b <- th[1:k]; g <- th[(k + 1):(k + m)]
      -sum(pnorm(q * drop(X %*% b) / exp(drop(Z %*% g)), log.p = TRUE))
    }
    ngr <- function(th) {
      b <- th[1:k]; g <- th[(k + 1):(k + m)]
      s <- exp(-drop(Z %*% g)); e <- drop(X %*% b) * s
      lam <- q * exp(dnorm(q * e, log = TRUE) - pnorm(q * e, log.p = TRUE))
      -c(colSums(lam * s * X), colSums(-lam * e * Z))
    }
    th0 <- c(coef(base), rep(0, m))
    o <- optim(th0, nll, ngr, method = "BFGS", control = list(reltol = 1e-16, maxit = 10000))
    o <- optim(o$par, nll, ngr, method = "BFGS", control = list(reltol = 1e-16, maxit = 10000))
    se <- sqrt(diag(solve(optimHess(o$par, nll, ngr, control = list(ndeps = rep(1e-6, k + m))))))
    res$hetero <- list(par = unname(o$par), se = unname(se), loglik = -o$value,
                       lr = 2 * (-o$value - as.numeric(logLik(base))), convergence = o$convergence)
  }
  res
})
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE), args[2])
