# Reference values for the closed-form case deletion (app/engine/case-deletion.ts): stats::lm
# refitted on tests/reference/data/trial-ancova.csv (invented, seeded) without chosen rows,
# unweighted and with the prior weights w. Treatment contrasts vs Placebo with model-based SE.
#
# Run from the repository root:  Rscript tests/reference/case-deletion/generate.R
# Writes tests/reference/case-deletion/values.json (committed; the tests run without R).
suppressPackageStartupMessages(library(jsonlite))

d <- read.csv("tests/reference/data/trial-ancova.csv", stringsAsFactors = FALSE)
d$arm <- factor(d$arm, levels = c("Placebo", "High dose", "Low dose"))
d$sex <- factor(d$sex, levels = c("F", "M"))
d$row <- seq_len(nrow(d))

one <- function(weighted, drop, label) {
  keep <- !(d$row %in% drop)
  dd <- d[keep, ]
  fit <- if (weighted) lm(chg ~ arm + base + age + sex, data = dd, weights = w) else lm(chg ~ arm + base + age + sex, data = dd)
  s <- summary(fit)
  co <- coef(s)
  contrasts <- lapply(c("High dose", "Low dose"), function(level) {
    nm <- paste0("arm", level)
    est <- unname(co[nm, "Estimate"]); se <- unname(co[nm, "Std. Error"])
    q <- qt(0.975, fit$df.residual)
    list(label = paste(level, "vs Placebo"), estimate = est, se = se, lower = est - q * se, upper = est + q * se, p = unname(co[nm, "Pr(>|t|)"]))
  })
  list(case = label, weighted = weighted, drop = I(drop), coefficients = unname(coef(fit)), sigma = s$sigma, df = fit$df.residual, contrasts = contrasts)
}

full <- lm(chg ~ arm + base + age + sex, data = d)
fullw <- lm(chg ~ arm + base + age + sex, data = d, weights = w)
top3 <- order(cooks.distance(full), decreasing = TRUE)[1:3]
top3w <- order(cooks.distance(fullw), decreasing = TRUE)[1:3]
cases <- list(
  one(FALSE, top3, "unweighted, the three largest Cook's distances"),
  one(FALSE, c(5, 17, 42, 99, 120), "unweighted, five fixed rows"),
  one(FALSE, c(77), "unweighted, one row"),
  one(TRUE, top3w, "weighted, the three largest Cook's distances"),
  one(TRUE, c(5, 17, 42, 99, 120), "weighted, five fixed rows")
)
out <- list(source = paste("R", R.version$major, R.version$minor, "stats::lm"), data = "tests/reference/data/trial-ancova.csv", cases = cases)
writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE), "tests/reference/case-deletion/values.json")
