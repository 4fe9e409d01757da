# Oracle check (base R plus the Debian packages r-cran-lmtest, r-cran-car, r-cran-mass) of the demo dataset's planted findings, fitted with R (stats, lmtest, car, MASS).
# Usage: Rscript tests/demo/check-demo.R adeff.csv > tests/demo/demo-findings.json
# The CSV comes from: npx tsx scripts/write-demo-data.ts <dir>/adeff.csv
suppressPackageStartupMessages({
  library(lmtest)
  library(car)
  library(MASS)
})

# Minimal JSON writer (base R only), six significant digits for numbers.
to_json <- function(x, indent = "") {
  inner <- paste0(indent, "  ")
  if (is.list(x)) {
    items <- vapply(names(x), function(k) {
      paste0(inner, '"', k, '": ', to_json(x[[k]], inner))
    }, character(1))
    return(paste0("{\n", paste(items, collapse = ",\n"), "\n", indent, "}"))
  }
  if (is.character(x)) return(paste0('"', gsub('"', '\\\\"', x), '"'))
  if (is.logical(x)) return(if (x) "true" else "false")
  if (x == round(x) && abs(x) < 1e9) return(format(x, scientific = FALSE))
  trimws(formatC(x, digits = 6, format = "g"))
}

args <- commandArgs(trailingOnly = TRUE)
if (length(args) != 1) stop("give the CSV path: Rscript tests/demo/check-demo.R adeff.csv")
path <- args[[1]]

d <- read.csv(path, stringsAsFactors = FALSE, na.strings = "")
d$arm <- factor(d$arm, levels = c("Placebo", "Lorvanitide 40 mg", "Lorvanitide 120 mg"))
d$stratum <- factor(d$stratum, levels = c("Moderate", "Severe"))
d$region <- factor(d$region, levels = c("North", "Central", "South"))
d$sex <- factor(d$sex, levels = c("F", "M"))

fas <- d[d$fasfl == "Y", ]
a <- fas[complete.cases(fas[, c("chg", "arm", "base", "stratum", "region", "sex", "age")]), ]

# Primary ANCOVA of the invented SAP.
fit <- lm(chg ~ arm + base + stratum + region + sex + age, data = a)
co <- summary(fit)$coefficients
n <- nrow(a)
p <- length(coef(fit))

cd <- cooks.distance(fit)
ord <- order(cd, decreasing = TRUE)
h <- hatvalues(fit)
rs <- rstandard(fit)

bp_model <- bptest(fit)                      # studentized Breusch-Pagan on the model's regressors
bp_base <- bptest(fit, varformula = ~ base, data = a)
bf_arm <- leveneTest(resid(fit) ~ arm, data = a, center = median)  # Brown-Forsythe
reset <- resettest(fit, power = 2:3, type = "fitted")
fit_q <- update(fit, . ~ . + I(age^2))
quad <- anova(fit, fit_q)
sw <- shapiro.test(resid(fit))

# Flare counts: Poisson fit with log exposure offset, then negative binomial.
cnt <- fas
pois <- glm(flares ~ arm + stratum + region + offset(logexp), family = poisson, data = cnt)
pearson_df <- sum(residuals(pois, type = "pearson")^2) / df.residual(pois)
nb <- glm.nb(flares ~ arm + stratum + region + offset(logexp), data = cnt)
nb_co <- summary(nb)$coefficients

# Responder: logistic regression on the primary covariates.
r <- fas[complete.cases(fas[, c("resp", "arm", "base", "stratum", "region", "sex", "age")]), ]
logit <- glm(resp ~ arm + base + stratum + region + sex + age, family = binomial, data = r)
events <- sum(r$resp == 1)
nonevents <- sum(r$resp == 0)
lp <- length(coef(logit)) - 1

sd_by_arm <- tapply(resid(fit), a$arm, sd)

out <- list(
  source = "R lm/glm, lmtest::bptest, lmtest::resettest, car::leveneTest(center = median), MASS::glm.nb",
  rVersion = paste(R.version$major, R.version$minor, sep = "."),
  csvMd5 = unname(tools::md5sum(path)),
  rows = nrow(d),
  armCounts = as.list(c(table(d$arm))),
  fasN = nrow(fas),
  ancova = list(
    n = n,
    parameters = p,
    highVsPlacebo = list(estimate = co["armLorvanitide 120 mg", "Estimate"], p = co["armLorvanitide 120 mg", "Pr(>|t|)"]),
    lowVsPlacebo = list(estimate = co["armLorvanitide 40 mg", "Estimate"], p = co["armLorvanitide 40 mg", "Pr(>|t|)"]),
    residualSdByArm = as.list(c(sd_by_arm)),
    breuschPaganModelP = unname(bp_model$p.value),
    breuschPaganBaseP = unname(bp_base$p.value),
    brownForsytheArmP = bf_arm[["Pr(>F)"]][1],
    resetP = unname(reset$p.value),
    ageQuadraticP = quad[["Pr(>F)"]][2],
    ageQuadraticEstimate = unname(coef(fit_q)["I(age^2)"]),
    shapiroWilkP = unname(sw$p.value),
    cooksThreshold = 4 / n,
    cooksMax = list(
      subjid = a$subjid[ord[1]],
      cooksD = unname(cd[ord[1]]),
      leverage = unname(h[ord[1]]),
      standardizedResidual = unname(rs[ord[1]])
    ),
    cooksSecond = list(subjid = a$subjid[ord[2]], cooksD = unname(cd[ord[2]])),
    leverageThreshold = 2 * p / n
  ),
  flares = list(
    n = nrow(cnt),
    poissonPearsonChi2PerDf = pearson_df,
    negativeBinomialTheta = unname(nb$theta),
    highVsPlaceboRateRatio = unname(exp(nb_co["armLorvanitide 120 mg", "Estimate"])),
    highVsPlaceboP = nb_co["armLorvanitide 120 mg", "Pr(>|z|)"]
  ),
  responder = list(
    n = nrow(r),
    events = events,
    nonEvents = nonevents,
    parameters = lp,
    eventsPerVariable = min(events, nonevents) / lp
  )
)
cat(to_json(out), "\n", sep = "")
