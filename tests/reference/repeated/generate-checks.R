# Reference values for the repeated-measures checks of normalized residuals
# (app/engine/repeated/repeated-checks.ts): Shapiro–Wilk (stats::shapiro.test, Royston's AS R94)
# and Brown–Forsythe (car::leveneTest with center = median, Debian r-cran-car) across the
# visit-by-arm cells, on the normalized residuals that generate.R computed for the invented trial
# (values/trial-unstructured-reml.json, in the data rows' order of data/trial.csv).
#
# Run from the repository root after generate.R:  Rscript tests/reference/repeated/generate-checks.R
# Writes tests/reference/repeated/values-checks/trial-unstructured-reml.json.

suppressPackageStartupMessages({
  library(jsonlite)
  library(car)
})

root <- "tests/reference/repeated"
dir.create(file.path(root, "values-checks"), showWarnings = FALSE, recursive = TRUE)

trial <- read.csv(file.path(root, "data", "trial.csv"), stringsAsFactors = FALSE)
fit <- fromJSON(file.path(root, "values", "trial-unstructured-reml.json"))
e <- fit$normalizedResidual
stopifnot(length(e) == nrow(trial))

sw <- shapiro.test(e)
cell <- factor(paste(trial$AVISIT, trial$ARM, sep = " / "))
bf <- leveneTest(e ~ cell, center = median)
visit <- factor(trial$AVISIT)
bf_visit <- leveneTest(e ~ visit, center = median)

out <- list(
  source = paste(
    "stats::shapiro.test and car::leveneTest(center = median) in R", as.character(getRversion()),
    "with car", as.character(packageVersion("car")),
    "on the normalized residuals of values/trial-unstructured-reml.json"
  ),
  records = length(e),
  shapiroWilk = list(statistic = unname(sw$statistic), p = sw$p.value),
  brownForsythe = list(
    cells = nlevels(cell),
    statistic = bf[1, "F value"], df1 = bf[1, "Df"], df2 = bf[2, "Df"], p = bf[1, "Pr(>F)"]
  ),
  brownForsytheByVisit = list(
    cells = nlevels(visit),
    statistic = bf_visit[1, "F value"], df1 = bf_visit[1, "Df"], df2 = bf_visit[2, "Df"], p = bf_visit[1, "Pr(>F)"]
  )
)
writeLines(
  toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE),
  file.path(root, "values-checks", "trial-unstructured-reml.json")
)
