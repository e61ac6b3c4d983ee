# Writes the published data sets used by the random-intercept and survey-design tests
# to tests/fixtures/reference/ (run from the repository root: Rscript tests/reference/export_fixtures.R).
# - cbpp-herds.csv: lme4's `cbpp` (Lesnoff et al. 2004, contagious bovine pleuropneumonia
#   in 15 commercial herds in Ethiopia, 4 periods), expanded from counts to one row per
#   animal-period (y = 1 for a new serological case), so that herds are the clusters.
# - api-strat.csv: survey's `apistrat` (California Academic Performance Index 2000,
#   stratified random sample of 200 schools by school type), with the outcome
#   sch_wide (1 = met the school-wide growth target).
suppressPackageStartupMessages({ library(lme4); library(survey) })
data(cbpp, package = "lme4")
rows <- do.call(rbind, lapply(seq_len(nrow(cbpp)), function(i) {
  r <- cbpp[i, ]
  data.frame(herd = as.character(r$herd), period = as.character(r$period),
             y = c(rep(1L, r$incidence), rep(0L, r$size - r$incidence)))
}))
write.csv(rows, "tests/fixtures/reference/cbpp-herds.csv", row.names = FALSE, quote = FALSE)
data(api, package = "survey")
a <- data.frame(school = apistrat$snum, stype = as.character(apistrat$stype), district = apistrat$dnum,
                sch_wide = as.integer(apistrat$sch.wide == "Yes"), ell = apistrat$ell, meals = apistrat$meals,
                mobility = apistrat$mobility, pw = apistrat$pw, fpc = apistrat$fpc)
write.csv(a, "tests/fixtures/reference/api-strat.csv", row.names = FALSE, quote = FALSE)
