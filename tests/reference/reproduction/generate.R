# Reference case of the reproduction check: an invented three-arm ANCOVA trial fitted with R
# (stats::lm, emmeans for the adjusted means and the contrasts against placebo), whose results
# are then "printed" as a clinical study report would print them. The check must pass on the
# printed values and fail on a deliberately mistyped one.
#
# Run from the repository root:  Rscript tests/reference/reproduction/generate.R
# Writes data/trial.csv, models/printed.json (the model with the correctly printed values),
# models/mistyped.json (one value mistyped: the last digit of the High vs Placebo estimate) and
# values/r-values.json (R's values at full precision, with the text printed for each).

suppressPackageStartupMessages({
  library(jsonlite)
  library(emmeans)
})

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
set.seed(20261205)
root <- "tests/reference/reproduction"
for (d in c("data", "models", "values")) dir.create(file.path(root, d), showWarnings = FALSE, recursive = TRUE)

# ---- invented trial: change from baseline in a symptom score, three arms, two regions
n <- 96
arm <- rep(c("Placebo", "Low", "High"), each = n / 3)
region <- sample(c("North", "South"), n, replace = TRUE)
base <- round(rnorm(n, 24, 4), 1)
effect <- c(Placebo = 0, Low = -1.4, High = -2.6)[arm]
chg <- round(-1 + effect - 0.18 * (base - 24) + ifelse(region == "South", 0.7, 0) + rnorm(n, 0, 2.2), 2)
d <- data.frame(USUBJID = sprintf("RPR-%03d", seq_len(n)), TRTP = arm, REGION = region, BASE = base, CHG = chg)
d$CHG[c(7, 52)] <- NA # two subjects without the week's value
write.csv(d, file.path(root, "data", "trial.csv"), row.names = FALSE, na = "")

# ---- the fit as the plan states it: Placebo the reference arm, North the reference region
d <- read.csv(file.path(root, "data", "trial.csv"), na.strings = "", stringsAsFactors = FALSE)
d$TRTP <- relevel(factor(d$TRTP, levels = c("High", "Low", "Placebo")), ref = "Placebo")
d$REGION <- factor(d$REGION, levels = c("North", "South"))
fit <- lm(CHG ~ TRTP + BASE + REGION, data = d)
co <- summary(fit)$coefficients
ci <- confint(fit)
em <- emmeans(fit, ~ TRTP) # equal weights over the regions, BASE at its mean over the rows used
ems <- summary(em, infer = TRUE)
ct <- summary(contrast(em, method = "trt.vs.ctrl", ref = "Placebo", adjust = "none"), infer = TRUE)

# Half away from zero at `dp` decimals, as the report's program printed (never half to even).
printed <- function(x, dp) formatC(sign(x) * floor(abs(x) * 10^dp + 0.5 + 1e-9) / 10^dp, format = "f", digits = dp)
printed_p <- function(p, dp = 3) if (p < 10^-dp) paste0("<", formatC(10^-dp, format = "f", digits = dp)) else printed(p, dp)

row_of <- function(level) which(ct$contrast == paste(level, "- Placebo"))
hi <- row_of("High")
lo <- row_of("Low")
mean_pl <- which(ems$TRTP == "Placebo")
values <- list(
  list(published = list(quantity = "contrast", level = "High", statistic = "estimate"), r = ct$estimate[hi], dp = 2),
  list(published = list(quantity = "contrast", level = "High", statistic = "se"), r = ct$SE[hi], dp = 3),
  list(published = list(quantity = "contrast", level = "High", statistic = "lower"), r = ct$lower.CL[hi], dp = 2),
  list(published = list(quantity = "contrast", level = "High", statistic = "upper"), r = ct$upper.CL[hi], dp = 2),
  list(published = list(quantity = "contrast", level = "High", statistic = "p"), r = ct$p.value[hi], p = TRUE),
  list(published = list(quantity = "contrast", level = "Low", statistic = "estimate"), r = ct$estimate[lo], dp = 2),
  list(published = list(quantity = "contrast", level = "Low", statistic = "p"), r = ct$p.value[lo], p = TRUE),
  list(published = list(quantity = "mean", level = "Placebo", statistic = "estimate"), r = ems$emmean[mean_pl], dp = 2),
  list(published = list(quantity = "mean", level = "Placebo", statistic = "se"), r = ems$SE[mean_pl], dp = 3),
  list(published = list(quantity = "coefficient", term = list(list(variable = "BASE")), statistic = "estimate"), r = co["BASE", "Estimate"], dp = 3),
  list(published = list(quantity = "coefficient", term = list(list(variable = "BASE")), statistic = "upper"), r = ci["BASE", 2], dp = 3),
  list(published = list(quantity = "coefficient", term = list(list(variable = "REGION", level = "South")), statistic = "estimate"), r = co["REGIONSouth", "Estimate"], dp = 2),
  list(published = list(quantity = "coefficient", term = list(list(variable = "REGION", level = "South")), statistic = "p"), r = co["REGIONSouth", "Pr(>|t|)"], p = TRUE)
)
values <- lapply(values, function(v) {
  v$published$value <- if (isTRUE(v$p)) printed_p(v$r) else printed(v$r, v$dp)
  v
})

spec <- list(
  response = "CHG",
  family = "gaussian",
  intercept = TRUE,
  terms = list(list(variable = "TRTP", categorical = TRUE, reference = "Placebo"), list(variable = "BASE"), list(variable = "REGION", categorical = TRUE, reference = "North")),
  id = "USUBJID",
  treatment = "TRTP"
)
published <- lapply(values, function(v) v$published)
write_json(c(spec, list(published = published)), file.path(root, "models", "printed.json"), auto_unbox = TRUE, pretty = TRUE, digits = NA)

# The mistyped report: the High vs Placebo estimate with its last digit one higher.
wrong <- published
est <- as.numeric(wrong[[1]]$value)
wrong[[1]]$value <- formatC(est + sign(est) * 0.01, format = "f", digits = 2)
write_json(c(spec, list(published = wrong)), file.path(root, "models", "mistyped.json"), auto_unbox = TRUE, pretty = TRUE, digits = NA)

write_json(
  list(
    source = "R stats::lm, emmeans (equal weights, contrasts against Placebo without adjustment); tests/reference/reproduction/generate.R",
    r = R.version.string,
    emmeans = as.character(packageVersion("emmeans")),
    n = nobs(fit),
    values = lapply(values, function(v) list(published = v$published, r = v$r)),
    mistyped = list(index = 0, printed = wrong[[1]]$value)
  ),
  file.path(root, "values", "r-values.json"),
  auto_unbox = TRUE, pretty = TRUE, digits = NA
)
