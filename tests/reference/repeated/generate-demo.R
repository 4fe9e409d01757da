# Reference values for the demo study's planned repeated-measures model, computed with R's
# nlme::gls (Debian r-cran-nlme) and emmeans on the gls fit (Debian r-cran-emmeans).
#
# Run from the repository root:  Rscript tests/reference/repeated/generate-demo.R
# Reads data/demo-advisits.csv (the demo's advisits.csv, kept equal to the generator's bytes by
# tests/unit/demo-visits.test.ts) and writes values-demo/advisits.json: the treatment contrasts
# at each visit of chg ~ arm * avisit + base * avisit + stratum in the full analysis set, with an
# unstructured covariance of the visits within a subject (corSymm + varIdent by visit), REML;
# intervals unadjusted for multiplicity (emmeans adjusts treatment-vs-control intervals by default).

suppressPackageStartupMessages({
  library(jsonlite)
  library(nlme)
  library(emmeans)
})

root <- "tests/reference/repeated"
d <- read.csv(file.path(root, "data", "demo-advisits.csv"), stringsAsFactors = FALSE)
d <- d[d$fasfl == "Y", ]
d$arm <- factor(d$arm, levels = c("Placebo", "Lorvanitide 120 mg", "Lorvanitide 40 mg"))
d$avisit <- factor(d$avisit, levels = c("Week 2", "Week 4", "Week 8", "Week 12"))
d$pos <- as.integer(d$avisit)
ctrl <- glsControl(maxIter = 500, msMaxIter = 2000, tolerance = 1e-12, msTol = 1e-14)
fit <- gls(chg ~ arm * avisit + base * avisit + stratum, data = d, method = "REML",
  correlation = corSymm(form = ~ pos | subjid), weights = varIdent(form = ~ 1 | avisit), control = ctrl)
emm <- emmeans(fit, ~ arm | avisit, mode = "satterthwaite")
ct <- as.data.frame(summary(contrast(emm, "trt.vs.ctrl", ref = 1, adjust = "none"), infer = c(TRUE, TRUE)))
out <- list(
  source = "R nlme::gls (REML, corSymm + varIdent by visit) and emmeans trt.vs.ctrl contrasts by visit",
  logLik = as.numeric(logLik(fit)),
  records = nrow(d),
  subjects = length(unique(d$subjid)),
  contrasts = lapply(seq_len(nrow(ct)), function(i) list(
    label = as.character(ct$contrast[i]), visit = as.character(ct$avisit[i]),
    estimate = ct$estimate[i], se = ct$SE[i], lower = ct$lower.CL[i], upper = ct$upper.CL[i]
  ))
)
dir.create(file.path(root, "values-demo"), showWarnings = FALSE)
writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE), file.path(root, "values-demo", "advisits.json"))
