# Reference values for the Cox sensitivity analyses, computed with R's survival package (3.x,
# Debian r-cran-survival) as an independent oracle, on the invented trial-shaped data that
# generate.R wrote (data/trial-breslow-cluster.csv; no real people):
#   - the planned model (Breslow ties, TRTP against Placebo, AGE, BASE, STRAT2, strata STRAT1)
#     with the robust sandwich variance clustered by the subject id (coxph's `cluster`);
#   - the same model without its strata;
#   - each arm's restricted mean survival time to a horizon tau, with its standard error, from
#     the Kaplan–Meier curve (survfit's `rmean`).
#
# Run from the repository root:  Rscript tests/reference/survival/generate-sensitivity.R
# Writes sensitivity/trial-breslow-cluster.json (beside values/, which holds only the fitted reference cases).

suppressPackageStartupMessages({
  library(jsonlite)
  library(survival)
})

root <- "tests/reference/survival"
ctrl <- coxph.control(eps = 1e-12, toler.chol = 1e-13, iter.max = 100)
d <- read.csv(file.path(root, "data", "trial-breslow-cluster.csv"), na.strings = c("", "NA", "."), stringsAsFactors = FALSE)
d <- d[complete.cases(d[, c("AVAL", "CNSR", "TRTP", "AGE", "BASE", "STRAT1", "STRAT2", "USUBJID")]), ]
d$TRTP <- relevel(factor(d$TRTP), ref = "Placebo")
d$STRAT2 <- factor(d$STRAT2, levels = sort(unique(d$STRAT2), method = "radix"))

treatment_row <- function(fit) {
  s <- summary(fit)
  j <- "TRTPActive"
  ci <- s$conf.int[j, ]
  out <- list(
    estimate = unname(coef(fit)[j]),
    se = unname(sqrt(fit$var[match(j, names(coef(fit))), match(j, names(coef(fit)))])),
    ratio = unname(ci["exp(coef)"]),
    ratioLower = unname(ci["lower .95"]),
    ratioUpper = unname(ci["upper .95"]),
    p = unname(s$coefficients[j, ncol(s$coefficients)])
  )
  if (!is.null(fit$naive.var)) out$naiveSe <- unname(sqrt(diag(fit$naive.var))[match(j, names(coef(fit)))])
  out
}

robust <- coxph(Surv(AVAL, CNSR == 0) ~ TRTP + AGE + BASE + STRAT2 + strata(STRAT1), data = d, ties = "breslow", cluster = USUBJID, control = ctrl)
unstratified <- coxph(Surv(AVAL, CNSR == 0) ~ TRTP + AGE + BASE + STRAT2, data = d, ties = "breslow", control = ctrl)

tau <- 180
km <- survfit(Surv(AVAL, CNSR == 0) ~ TRTP, data = d)
tab <- summary(km, rmean = tau)$table
rmst <- lapply(rownames(tab), function(r) list(level = sub("^TRTP=", "", r), rmean = unname(tab[r, "rmean"]), se = unname(tab[r, "se(rmean)"])))

values <- list(
  source = "invented (seeded) trial-shaped data written by generate.R",
  oracle = paste0(R.version.string, "; survival ", as.character(packageVersion("survival"))),
  robustSubject = treatment_row(robust),
  unstratified = treatment_row(unstratified),
  rmst = list(tau = tau, arms = rmst)
)
writeLines(toJSON(values, auto_unbox = TRUE, pretty = TRUE, digits = NA), file.path(root, "sensitivity", "trial-breslow-cluster.json"))
