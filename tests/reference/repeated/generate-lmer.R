# Reference values for the repeated-measures engine from an lme4 fit (Debian r-cran-lme4) with a
# random intercept per subject, which is the compound-symmetry model (positive within-subject
# correlation) fitted by REML: Kenward–Roger from pbkrtest (r-cran-pbkrtest) and emmeans with
# lmer.df = "kenward-roger"; Satterthwaite F tests of several rows from lmerTest's contestMD
# (r-cran-lmertest; the denominator df of Fai and Cornelius from the eigen-directions of LCL').
#
# Run from the repository root:  Rscript tests/reference/repeated/generate-lmer.R
# Reads data/trial.csv (made by generate.R) and writes values-lmer/trial-compound-symmetry-reml.json.
# lmer is run with tight tolerances; its REML log-likelihood is checked against the settled
# compound-symmetry value of values/trial-compound-symmetry-reml.json.

suppressPackageStartupMessages({
  library(jsonlite)
  library(lme4)
  library(pbkrtest)
  library(emmeans)
  library(lmerTest)
})
root <- "tests/reference/repeated"
dir.create(file.path(root, "values-lmer"), showWarnings = FALSE)
d <- read.csv(file.path(root, "data", "trial.csv"), stringsAsFactors = FALSE)
d$ARM <- factor(d$ARM, levels = c("Placebo", "Dose 10 mg", "Dose 20 mg"))
d$AVISIT <- factor(d$AVISIT, levels = sort(unique(d$AVISIT), method = "radix"))
ctrl <- lmerControl(optimizer = "nloptwrap", optCtrl = list(xtol_abs = 1e-14, ftol_abs = 1e-14, xtol_rel = 1e-14, ftol_rel = 1e-15, maxeval = 100000))
full <- lmer(CHG ~ ARM + AVISIT + BASE + ARM:AVISIT + BASE:AVISIT + (1 | USUBJID), data = d, REML = TRUE, control = ctrl)
reduced <- lmer(CHG ~ ARM + AVISIT + BASE + BASE:AVISIT + (1 | USUBJID), data = d, REML = TRUE, control = ctrl)
settled <- fromJSON(file.path(root, "values", "trial-compound-symmetry-reml.json"))$logLik
gap <- as.numeric(logLik(full)) - settled
stopifnot(abs(gap) < 1e-7)
adj <- vcovAdj(full)
X <- getME(full, "X")
p <- ncol(X)
coef_df <- vapply(seq_len(p), function(j) { L <- matrix(0, 1, p); L[j] <- 1; get_Lb_ddf(full, L) }, 0)
kr <- KRmodcomp(full, reduced)
# Satterthwaite F test of the treatment-by-visit coefficients (unit rows on those columns)
inter <- grep("^ARM.*:AVISIT", colnames(X))
L <- matrix(0, length(inter), p)
L[cbind(seq_along(inter), inter)] <- 1
sat <- lmerTest::contestMD(lmerTest::as_lmerModLmerTest(full), L, ddf = "Satterthwaite")
e <- emmeans(full, ~ ARM | AVISIT, lmer.df = "kenward-roger")
s <- as.data.frame(summary(e))
ce <- as.data.frame(summary(contrast(e, "trt.vs.ctrl")))
out <- list(
  source = sprintf("R %s, lme4 %s, pbkrtest %s, emmeans %s: lmer(REML, random intercept), vcovAdj, get_Lb_ddf, KRmodcomp; REML log-likelihood %.10g (settled compound-symmetry value %+.2g off)",
    getRversion(), packageVersion("lme4"), packageVersion("pbkrtest"), packageVersion("emmeans"), as.numeric(logLik(full)), gap),
  coefficients = lapply(seq_len(p), function(j) list(name = colnames(X)[j], estimate = unname(fixef(full)[j]), se = sqrt(as.matrix(adj)[j, j]), df = coef_df[j])),
  treatmentByVisit = list(statistic = kr$stats$Fstat, numeratorDf = kr$stats$ndf, denominatorDf = kr$stats$ddf),
  means = lapply(seq_len(nrow(s)), function(i) list(level = as.character(s$ARM[i]), visit = as.character(s$AVISIT[i]), estimate = s$emmean[i], se = s$SE[i], df = s$df[i])),
  contrasts = lapply(seq_len(nrow(ce)), function(i) list(label = as.character(ce$contrast[i]), visit = as.character(ce$AVISIT[i]), estimate = ce$estimate[i], se = ce$SE[i], df = ce$df[i])),
  satterthwaiteTreatmentByVisit = list(statistic = sat$`F value`, numeratorDf = sat$NumDF, denominatorDf = sat$DenDF)
)
writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE), file.path(root, "values-lmer", "trial-compound-symmetry-reml.json"))
cat("gap", gap, "\n")
