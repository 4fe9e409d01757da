# Reference values for the analysis as a statistical analysis plan states it: a population of
# several conditions on a long (subject x parameter x visit) dataset, adjusted means with equal
# or proportional weighting, contrasts against the reference arm and between every pair of arms
# (model-based and HC3), the overall test of the treatment term, and multiplicity adjustment.
# Oracles: stats::lm, emmeans (weights, pairwise contrasts with adjust = "none"), sandwich::vcovHC
# (type "HC3"), car::Anova (type II F), stats::glm with anova(test = "LRT"), stats::p.adjust.
#
# Run from the repository root:  Rscript tests/reference/sap/generate.R
# Writes the invented long dataset to tests/reference/sap/data/, the model specifications to
# models/ and R's answers to values/. The committed files let the test suite run without R.

suppressPackageStartupMessages({
  library(jsonlite)
  library(car)
  library(sandwich)
  library(emmeans)
})

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
set.seed(20261205)
root <- "tests/reference/sap"
for (d in c("data", "models", "values")) dir.create(file.path(root, d), showWarnings = FALSE, recursive = TRUE)

# ---- invented trial: three arms, unbalanced site groups, three parameters, three visits
n_subj <- 180
subj <- data.frame(
  USUBJID = sprintf("LNG-%03d", seq_len(n_subj)),
  TRT01P = sample(c("PBO", "LOW", "HIGH"), n_subj, replace = TRUE),
  SITEGR1 = sample(c("NORTH", "SOUTH", "WEST"), n_subj, replace = TRUE, prob = c(0.55, 0.3, 0.15)),
  SITEID = sample(c("101", "102", "103", "104", "999"), n_subj, replace = TRUE),
  AGE = round(runif(n_subj, 16, 82)),
  EFFFL = sample(c("Y", "N"), n_subj, replace = TRUE, prob = c(0.9, 0.1)),
  stringsAsFactors = FALSE
)
arm_effect <- c(PBO = 0, LOW = -2.1, HIGH = -3.4)
site_effect <- c(NORTH = 0, SOUTH = 1.8, WEST = -1.2)
rows <- list()
for (param in c("ACTOT", "PAIN", "RESP")) {
  for (visit in c(0, 12, 24)) {
    d <- subj
    d$PARAMCD <- param
    d$AVISITN <- visit
    d$BASE <- round(rnorm(n_subj, 30, 6), 1)
    eff <- arm_effect[d$TRT01P] * (visit / 24) + site_effect[d$SITEGR1]
    d$CHG <- if (visit == 0) 0 else round(eff - 0.25 * (d$BASE - 30) + rnorm(n_subj, 0, 4), 2)
    d$AVAL <- round(d$BASE + d$CHG, 2)
    rows[[length(rows) + 1]] <- d
  }
}
long <- do.call(rbind, rows)
# a binary response parameter: improved by at least 3 points
long$CRIT1FL <- ifelse(long$PARAMCD == "RESP" & long$AVISITN > 0, as.integer(long$CHG <= -3), NA)
# a few missing changes
long$CHG[sample(which(long$PARAMCD == "ACTOT" & long$AVISITN == 24), 4)] <- NA
long <- long[order(long$USUBJID, long$PARAMCD, long$AVISITN), c("USUBJID", "TRT01P", "SITEGR1", "SITEID", "AGE", "EFFFL", "PARAMCD", "AVISITN", "BASE", "AVAL", "CHG", "CRIT1FL")]
write.csv(long, file.path(root, "data", "long-trial.csv"), row.names = FALSE, na = "")
d <- read.csv(file.path(root, "data", "long-trial.csv"), na.strings = "", stringsAsFactors = FALSE, colClasses = c(SITEID = "character"))

population <- list(
  list(column = "EFFFL", `in` = list("Y")),
  list(column = "PARAMCD", `in` = list("ACTOT")),
  list(column = "AVISITN", `in` = list(24)),
  list(column = "AGE", min = 18, max = 75),
  list(column = "SITEID", notIn = list("999"))
)
steps <- list(
  d$EFFFL == "Y",
  d$PARAMCD == "ACTOT",
  d$AVISITN == 24,
  !is.na(d$AGE) & d$AGE >= 18 & d$AGE <= 75,
  d$SITEID != "999"
)
keep <- rep(TRUE, nrow(d))
removed <- integer(0)
for (s in steps) {
  removed <- c(removed, sum(keep & !s))
  keep <- keep & s
}
pop <- d[keep, ]

num <- function(x) unname(as.numeric(x))
levels_arm <- sort(unique(pop$TRT01P), method = "radix") # code-point order, as the engine
ref <- "PBO"
# the engine's pairs: each arm against the reference, then the other pairs (later vs earlier)
pairs_of <- function(lev, ref, pairwise) {
  out <- list()
  for (l in lev) if (l != ref) out[[length(out) + 1]] <- c(l, ref)
  if (pairwise) {
    others <- seq_along(lev)[lev != ref]
    for (a in others) for (b in others) if (b > a) out[[length(out) + 1]] <- c(lev[b], lev[a])
  }
  out
}

contrasts_of <- function(emm, pairs) {
  lev <- levels(emm)[[1]]
  method <- setNames(lapply(pairs, function(p) as.numeric(lev == p[1]) - as.numeric(lev == p[2])), vapply(pairs, function(p) paste(p[1], "vs", p[2]), ""))
  ct <- contrast(emm, method = method, adjust = "none")
  s <- summary(ct, infer = c(TRUE, TRUE), adjust = "none")
  raw <- s$p.value
  list(
    label = as.character(s$contrast), level = vapply(pairs, `[`, "", 1), reference = vapply(pairs, `[`, "", 2),
    estimate = num(s$estimate), se = num(s$SE), lower = num(s$lower.CL), upper = num(s$upper.CL),
    statistic = num(s$t.ratio), p = num(raw),
    pAdjusted = list(bonferroni = p.adjust(raw, "bonferroni"), holm = p.adjust(raw, "holm"), hochberg = p.adjust(raw, "hochberg"))
  )
}

# ---- linear: ANCOVA of the change at visit 24 on the efficacy population
pop$TRT01P <- factor(pop$TRT01P, levels = levels_arm)
contrasts(pop$TRT01P) <- contr.treatment(levels_arm, base = match(ref, levels_arm))
pop$SITEGR1 <- factor(pop$SITEGR1, levels = sort(unique(pop$SITEGR1), method = "radix"))
fit <- lm(CHG ~ TRT01P + SITEGR1 + BASE, data = pop)
hc3 <- vcovHC(fit, type = "HC3")
aov2 <- Anova(fit, type = 2)
linear <- list(
  case = "long-ancova",
  source = "stats::lm, emmeans, sandwich::vcovHC(type = \"HC3\"), car::Anova(type = 2), stats::p.adjust",
  population = list(inFile = nrow(d), excluded = nrow(d) - nrow(pop), removed = removed),
  n = nobs(fit),
  missing = nrow(pop) - nobs(fit),
  treatment = list(statistic = aov2["TRT01P", "F value"], df1 = aov2["TRT01P", "Df"], df2 = fit$df.residual, p = aov2["TRT01P", "Pr(>F)"]),
  results = list()
)
for (w in c("equal", "proportional")) {
  emm <- emmeans(fit, "TRT01P", weights = w)
  emm_hc3 <- emmeans(fit, "TRT01P", weights = w, vcov. = hc3)
  ms <- summary(emm)
  for (set in c("reference", "pairwise")) {
    pr <- pairs_of(levels_arm, ref, set == "pairwise")
    linear$results[[length(linear$results) + 1]] <- list(
      means = w, contrasts = set,
      adjustedMeans = list(level = as.character(ms$TRT01P), estimate = num(ms$emmean), se = num(ms$SE)),
      model = contrasts_of(emm, pr),
      hc3 = contrasts_of(emm_hc3, pr)
    )
  }
}
write_json(linear, file.path(root, "values", "long-ancova.json"), digits = NA, auto_unbox = TRUE, pretty = TRUE)
write_json(list(
  response = "CHG", family = "gaussian", id = "USUBJID", treatment = "TRT01P",
  terms = list(list(variable = "TRT01P", categorical = TRUE, reference = "PBO"), list(variable = "SITEGR1"), list(variable = "BASE")),
  population = population, means = "proportional", contrasts = "pairwise", multiplicity = "holm"
), file.path(root, "models", "long-ancova.json"), auto_unbox = TRUE, pretty = TRUE, digits = NA)

# ---- binomial: responders at visit 24, likelihood-ratio test of the treatment term
rpop_keep <- d$EFFFL == "Y" & d$PARAMCD == "RESP" & d$AVISITN == 24
rpop <- d[rpop_keep, ]
rpop$TRT01P <- factor(rpop$TRT01P, levels = levels_arm)
contrasts(rpop$TRT01P) <- contr.treatment(levels_arm, base = match(ref, levels_arm))
gfit <- glm(CRIT1FL ~ TRT01P + BASE, family = binomial, data = rpop)
gsmall <- glm(CRIT1FL ~ BASE, family = binomial, data = rpop)
lrt <- anova(gsmall, gfit, test = "LRT")
write_json(list(
  case = "long-responder",
  source = "stats::glm(family = binomial), anova(test = \"LRT\")",
  n = nobs(gfit),
  excluded = nrow(d) - nrow(rpop),
  treatment = list(statistic = lrt$Deviance[2], df = lrt$Df[2], p = lrt[["Pr(>Chi)"]][2])
), file.path(root, "values", "long-responder.json"), digits = NA, auto_unbox = TRUE, pretty = TRUE)
write_json(list(
  response = "CRIT1FL", family = "binomial", id = "USUBJID", treatment = "TRT01P",
  terms = list(list(variable = "TRT01P", categorical = TRUE, reference = "PBO"), list(variable = "BASE")),
  population = list(list(column = "EFFFL", `in` = list("Y")), list(column = "PARAMCD", `in` = list("RESP")), list(column = "AVISITN", `in` = list(24))),
  contrasts = "pairwise", multiplicity = "hochberg"
), file.path(root, "models", "long-responder.json"), auto_unbox = TRUE, pretty = TRUE, digits = NA)
cat("wrote", file.path(root, "values"), "\n")

# ---- time to event: a Cox model on one of two records per patient, chosen by a population
# condition (survival::colon, recurrence and death rows; the committed copy of the survival
# reference data, so both read the same cells)
suppressPackageStartupMessages(library(survival))
colon <- read.csv("tests/reference/survival/data/colon-cluster-log.csv", comment.char = "#", stringsAsFactors = FALSE)
deaths <- colon[colon$etype == 2, ]
deaths$rx <- relevel(factor(deaths$rx), ref = "Obs")
cfit <- coxph(Surv(time, status) ~ rx + factor(sex) + age + nodes, data = deaths, ties = "efron", control = coxph.control(eps = 1e-12))
write_json(list(
  case = "colon-deaths",
  source = "survival::coxph on survival::colon rows with etype = 2 (death), Efron ties",
  n = cfit$n,
  excluded = nrow(colon) - nrow(deaths),
  coefficients = list(name = names(coef(cfit)), estimate = num(coef(cfit)), se = num(sqrt(diag(vcov(cfit)))))
), file.path(root, "values", "colon-deaths.json"), digits = NA, auto_unbox = TRUE, pretty = TRUE)
write_json(list(
  family = "cox", response = "time", status = list(column = "status", event = list(1)),
  terms = list(list(variable = "rx", reference = "Obs"), list(variable = "sex", categorical = TRUE), list(variable = "age"), list(variable = "nodes")),
  treatment = "rx", id = "id", ties = "efron",
  population = list(list(column = "etype", `in` = list(2)))
), file.path(root, "models", "colon-deaths.json"), auto_unbox = TRUE, pretty = TRUE, digits = NA)
