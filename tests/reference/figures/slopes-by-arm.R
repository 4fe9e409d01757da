# Reference values for the slopes-by-arm figure (homogeneity of slopes), computed with R's stats:
# the partial residuals of base (residuals(fit, type = "partial"), centred component plus residual)
# of the ANCOVA chg ~ arm + base + age + sex on the committed trial-ancova case, and each arm's own
# least-squares slope of them on base; also the joint F test of arm × base (anova of nested fits),
# DFBETAS and DFFITS bounds as the plan states them.
#
# Run from the repository root:  Rscript tests/reference/figures/slopes-by-arm.R
suppressPackageStartupMessages(library(jsonlite))
d <- read.csv("tests/reference/data/trial-ancova.csv", stringsAsFactors = FALSE)
d <- d[complete.cases(d[, c("chg", "arm", "base", "age", "sex")]), ]
d$arm <- relevel(factor(d$arm), ref = "Placebo")
fit <- lm(chg ~ arm + base + age + sex, data = d)
pr <- residuals(fit, type = "partial")[, "base"]
slopes <- sapply(levels(d$arm), function(a) unname(coef(lm(pr ~ base, data = d, subset = d$arm == a))[2]))
wide <- lm(chg ~ arm + base + age + sex + arm:base, data = d)
ftest <- anova(fit, wide)
n <- nrow(d)
p <- length(coef(fit))
out <- list(
  arms = levels(d$arm),
  slopes = as.list(slopes),
  common = unname(coef(fit)["base"]),
  jointP = ftest[["Pr(>F)"]][2],
  dfbetasBound = 2 / sqrt(n),
  dffitsBound = 2 * sqrt(p / n)
)
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE), "tests/reference/figures/slopes-by-arm.json")
