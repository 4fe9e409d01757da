# Reference values for the repeated-measures figures, computed with R's stats from nlme's answers
# for the invented three-arm trial (tests/reference/repeated/values/trial-unstructured-reml.json,
# written by tests/reference/repeated/generate.R from gls(method = "REML") on
# tests/fixtures/mmrm-trial.csv):
#   - the Q-Q plot's theoretical quantiles qnorm(ppoints(n)) for the trial's records, and for
#     n = 7 (ppoints' a = 3/8 below 11 values, 1/2 from 11);
#   - qqline's reference line through the quartiles of the normalized residuals (type 7);
#   - each visit's sample SD of the normalized residuals (sd, n − 1);
#   - the adjusted means' 95% intervals from emmeans' estimate, SE and the exact Satterthwaite df:
#     estimate ± qt(0.975, df) · SE;
#   - the influence line 4/m for the trial's subjects.
#
# Run from the repository root:  Rscript tests/reference/figures/repeated-figures.R
suppressPackageStartupMessages(library(jsonlite))
v <- fromJSON("tests/reference/repeated/values/trial-unstructured-reml.json")
d <- read.csv("tests/fixtures/mmrm-trial.csv", stringsAsFactors = FALSE)
d <- d[complete.cases(d[, c("CHG", "ARM", "AVISIT", "BASE")]), ]
d <- d[order(d$USUBJID, d$AVISITN), ]
nr <- v$normalizedResidual
n <- length(nr)
y <- quantile(nr, c(0.25, 0.75), type = 7, names = FALSE)
x <- qnorm(c(0.25, 0.75))
slope <- diff(y) / diff(x)
visits <- unique(d$AVISIT[order(d$AVISITN)])
m <- v$means
m$lower <- m$estimate - qt(0.975, m$df) * m$se
m$upper <- m$estimate + qt(0.975, m$df) * m$se
out <- list(
  records = n,
  subjects = length(unique(d$USUBJID)),
  theoretical = qnorm(ppoints(n)),
  theoretical7 = qnorm(ppoints(7)),
  sorted = sort(nr),
  qqline = list(slope = slope, intercept = y[1] - slope * x[1]),
  visitSd = as.list(setNames(sapply(visits, function(w) sd(nr[d$AVISIT == w])), visits)),
  means = m[, c("level", "visit", "estimate", "lower", "upper")],
  cooksLine = 4 / length(unique(d$USUBJID))
)
writeLines(toJSON(out, digits = NA, auto_unbox = TRUE, pretty = TRUE), "tests/reference/figures/repeated-figures.json")
