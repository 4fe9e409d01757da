# Reference values for a numeric-coded categorical covariate: a pooled site group coded 701, 703,
# 704, 708, 709, 710 (invented data, fixed seed). R's stats::lm is the oracle, fitted twice: with
# factor(sitegr1) (treatment contrasts, lowest code the reference) and with sitegr1 as a number.
#
# Run from the repository root:  Rscript tests/engine/coded-site-group/generate.R
# Writes data.csv and values.json beside this script; the committed files let the test run
# without R.
suppressPackageStartupMessages(library(jsonlite))
RNGkind("Mersenne-Twister", "Inversion", "Rejection")
set.seed(20261205)
root <- "tests/engine/coded-site-group"
n <- 96
codes <- c(701, 703, 704, 708, 709, 710)
# Site effects that are not a straight line in the code.
effect <- c(`701` = 0, `703` = 6, `704` = -5, `708` = 4, `709` = -6, `710` = 7)
sitegr1 <- sample(codes, n, replace = TRUE)
arm <- sample(c("Placebo", "Active"), n, replace = TRUE)
base <- round(rnorm(n, 50, 8), 1)
chg <- round(-2 - 1.8 * (arm == "Active") + 0.1 * (base - 50) + effect[as.character(sitegr1)] + rnorm(n, 0, 5), 2)
d <- data.frame(usubjid = sprintf("01-%d-%04d", sitegr1, seq_len(n) + 1000), arm, sitegr1, base, chg)
write.csv(d, file.path(root, "data.csv"), row.names = FALSE)

d <- read.csv(file.path(root, "data.csv"), stringsAsFactors = FALSE)
d$arm <- relevel(factor(d$arm), ref = "Placebo")
coded <- lm(chg ~ arm + base + factor(sitegr1), data = d)
numeric <- lm(chg ~ arm + base + sitegr1, data = d)
row_of <- function(fit, name) {
  s <- summary(fit)$coefficients
  list(estimate = s[name, 1], se = s[name, 2], statistic = s[name, 3], p = s[name, 4])
}
out <- list(
  source = "R stats::lm, Rscript tests/engine/coded-site-group/generate.R",
  rVersion = R.version.string,
  categorical = list(treatment = row_of(coded, "armActive"), dfResidual = coded$df.residual, rank = coded$rank),
  continuous = list(treatment = row_of(numeric, "armActive"), site = row_of(numeric, "sitegr1"), dfResidual = numeric$df.residual, rank = numeric$rank)
)
writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE), file.path(root, "values.json"))
