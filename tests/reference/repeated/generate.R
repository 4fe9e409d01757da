# Reference values for the repeated-measures (MMRM) engine, computed with R's nlme::gls
# (Debian r-cran-nlme) and emmeans on the gls fit (Debian r-cran-emmeans) as independent oracles.
#
# Run from the repository root:  Rscript tests/reference/repeated/generate.R
# Writes each case's data to tests/reference/repeated/data/ (nlme's open Orthodont dataset, and an
# invented three-arm trial with dropout made here with a fixed seed, also kept as
# tests/fixtures/mmrm-trial.csv), its model specification to models/ and R's answers to values/.
#
# Covariance structures in nlme terms: unstructured = corSymm + varIdent by visit; compound
# symmetry = corCompSymm (heterogeneous: + varIdent); AR(1) = corAR1 on the visit position
# (+ varIdent); Toeplitz = corARMA(p = visits - 1) on the visit position (+ varIdent).
# gls is run with tight tolerances (tolerance 1e-12, msTol 1e-14, msMaxIter 2000).

suppressPackageStartupMessages({
  library(jsonlite)
  library(nlme)
  library(emmeans)
})

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
root <- "tests/reference/repeated"
for (d in c("data", "models", "values")) dir.create(file.path(root, d), showWarnings = FALSE, recursive = TRUE)
ctrl <- glsControl(maxIter = 500, msMaxIter = 2000, tolerance = 1e-12, msTol = 1e-14, returnObject = FALSE, natural = FALSE)
emm_options(msg.interaction = FALSE)
num <- function(x) unname(as.numeric(x))

# the engine's level order: numeric when every level is a number, else code point
order_levels <- function(x) {
  u <- unique(as.character(x[!is.na(x)]))
  nm <- suppressWarnings(as.numeric(u))
  if (all(!is.na(nm))) u[order(nm, u, method = "radix")] else sort(u, method = "radix")
}

# ---- data -------------------------------------------------------------------------------------
orth <- as.data.frame(nlme::Orthodont)
orthodont <- data.frame(
  SUBJECT = as.character(orth$Subject), SEX = as.character(orth$Sex), AGE = orth$age, DISTANCE = orth$distance,
  stringsAsFactors = FALSE
)
orthodont <- orthodont[order(orthodont$SUBJECT, orthodont$AGE, method = "radix"), ]
write.csv(orthodont, file.path(root, "data", "orthodont.csv"), row.names = FALSE, na = "")

# invented trial: 3 arms, 5 post-baseline visits, baseline, unstructured errors, monotone dropout
set.seed(20261205)
n_per_arm <- 40
arms <- c("Placebo", "Dose 10 mg", "Dose 20 mg")
visits <- c(2, 4, 8, 12, 16)
sd_v <- c(4, 4.5, 5, 5.5, 6)
corr <- outer(1:5, 1:5, function(a, b) 0.75^abs(a - b) * 0.9 + 0.1 * (a == b))
sigma <- diag(sd_v) %*% corr %*% diag(sd_v)
rows <- list()
k <- 0
for (a in seq_along(arms)) {
  for (s in seq_len(n_per_arm)) {
    k <- k + 1
    id <- sprintf("S-%03d", k)
    base <- round(rnorm(1, 50, 6), 1)
    effect <- c(0, -1.5, -3)[a] * visits / 16
    e <- drop(rnorm(5) %*% chol(sigma))
    chg <- round(-0.1 * visits - 0.2 * (base - 50) + effect + e, 2)
    last <- if (runif(1) < 0.3) sample(1:4, 1) else 5
    for (v in seq_len(last)) {
      rows[[length(rows) + 1]] <- data.frame(
        USUBJID = id, ARM = arms[a], AVISIT = paste("Week", visits[v]), AVISITN = visits[v], BASE = base, CHG = chg[v],
        stringsAsFactors = FALSE
      )
    }
  }
}
trial <- do.call(rbind, rows)
write.csv(trial, file.path(root, "data", "trial.csv"), row.names = FALSE, na = "")
dir.create("tests/fixtures", showWarnings = FALSE)
write.csv(trial, "tests/fixtures/mmrm-trial.csv", row.names = FALSE, na = "")

# ---- fitting ----------------------------------------------------------------------------------
structure_args <- function(structure, pos, subject, visit, ord) {
  het <- grepl("heterogeneous", structure)
  w <- if (het || structure == "unstructured") varIdent(form = as.formula(paste("~ 1 |", visit))) else NULL
  ff <- as.formula(paste("~", pos, "|", subject))
  cor <- switch(sub("-heterogeneous", "", structure),
    "unstructured" = corSymm(form = ff),
    "compound-symmetry" = corCompSymm(form = as.formula(paste("~ 1 |", subject))),
    "ar1" = corAR1(form = ff),
    "toeplitz" = corARMA(form = ff, p = length(ord) - 1, q = 0)
  )
  list(correlation = cor, weights = w)
}

run_case <- function(name, file, spec, formula, emm = TRUE) {
  writeLines(toJSON(spec, auto_unbox = TRUE, pretty = TRUE), file.path(root, "models", paste0(name, ".json")))
  d <- read.csv(file.path(root, "data", file), stringsAsFactors = FALSE, check.names = FALSE)
  rep <- spec$repeated
  visit_levels <- order_levels(d[[rep$visit]])
  ord <- if (is.null(rep$visitOrder)) visit_levels else {
    m <- unique(d[, c(rep$visit, rep$visitOrder)])
    m[[rep$visit]][order(m[[rep$visitOrder]])]
  }
  d$.POS <- match(d[[rep$visit]], ord)
  for (t in spec$terms) {
    v <- t$variable
    if (is.null(v)) next
    if (v == rep$visit || isTRUE(t$categorical) || !is.numeric(d[[v]])) {
      labels <- as.character(d[[v]])
      lev <- order_levels(labels)
      ref <- if (is.null(t$reference)) lev[1] else t$reference
      d[[v]] <- factor(labels, levels = c(ref, setdiff(lev, ref)))
    }
  }
  d[[rep$subject]] <- factor(d[[rep$subject]])
  args <- structure_args(rep$covariance, ".POS", rep$subject, rep$visit, ord)
  method <- if (identical(rep$method, "ml")) "ML" else "REML"
  # the call carries its values (not names), so emmeans can re-evaluate it
  fit <- do.call("gls", list(model = formula, data = d, correlation = args$correlation, weights = args$weights, method = method, control = ctrl))
  # the marginal covariance of a subject observed at every visit
  full <- names(which(table(d[[rep$subject]]) == length(ord)))[1]
  vc <- getVarCov(fit, individual = full)
  out <- list(
    source = sprintf("R %s, nlme %s, emmeans %s: gls(method = \"%s\")", getRversion(), packageVersion("nlme"), packageVersion("emmeans"), method),
    coefficients = lapply(seq_along(coef(fit)), function(j) list(name = names(coef(fit))[j], estimate = num(coef(fit)[j]), se = num(sqrt(diag(vcov(fit)))[j]))),
    logLik = num(logLik(fit)),
    aic = num(AIC(fit)),
    parameterCount = attr(logLik(fit), "df"),
    covariance = lapply(seq_len(nrow(vc)), function(i) num(vc[i, ])),
    fitted = num(fitted(fit)),
    residual = num(residuals(fit, type = "response")),
    normalizedResidual = num(residuals(fit, type = "normalized"))
  )
  if (emm && !is.null(spec$treatment)) {
    e <- emmeans(fit, as.formula(paste("~", spec$treatment, "|", rep$visit)), data = d, mode = "satterthwaite")
    s <- as.data.frame(summary(e))
    out$means <- lapply(seq_len(nrow(s)), function(i) list(
      level = as.character(s[[spec$treatment]][i]), visit = as.character(s[[rep$visit]][i]),
      estimate = s$emmean[i], se = s$SE[i], df = s$df[i]))
    ctr <- as.data.frame(summary(contrast(e, "trt.vs.ctrl")))
    out$contrasts <- lapply(seq_len(nrow(ctr)), function(i) list(
      label = as.character(ctr$contrast[i]), visit = as.character(ctr[[rep$visit]][i]),
      estimate = ctr$estimate[i], se = ctr$SE[i], df = ctr$df[i]))
  }
  writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = TRUE), file.path(root, "values", paste0(name, ".json")))
  cat(name, "logLik", num(logLik(fit)), "\n")
}

orth_spec <- function(structure, method) list(
  response = "DISTANCE",
  terms = list(list(variable = "SEX", reference = "Male"), list(variable = "AGE", categorical = TRUE), list(interaction = c("SEX", "AGE"))),
  treatment = "SEX",
  repeated = list(subject = "SUBJECT", visit = "AGE", covariance = structure, df = "satterthwaite", method = method)
)
orth_formula <- DISTANCE ~ SEX + AGE + SEX:AGE
run_case("orthodont-unstructured-reml", "orthodont.csv", orth_spec("unstructured", "reml"), orth_formula)
run_case("orthodont-unstructured-ml", "orthodont.csv", orth_spec("unstructured", "ml"), orth_formula, emm = FALSE)
run_case("orthodont-compound-symmetry-reml", "orthodont.csv", orth_spec("compound-symmetry", "reml"), orth_formula)
run_case("orthodont-ar1-reml", "orthodont.csv", orth_spec("ar1", "reml"), orth_formula)

trial_spec <- function(structure, method) list(
  response = "CHG",
  terms = list(list(variable = "ARM", reference = "Placebo"), list(variable = "AVISIT"), list(variable = "BASE"),
    list(interaction = c("ARM", "AVISIT")), list(interaction = c("BASE", "AVISIT"))),
  treatment = "ARM",
  repeated = list(subject = "USUBJID", visit = "AVISIT", visitOrder = "AVISITN", covariance = structure, df = "satterthwaite", method = method)
)
trial_formula <- CHG ~ ARM + AVISIT + BASE + ARM:AVISIT + BASE:AVISIT
for (s in c("unstructured", "compound-symmetry", "compound-symmetry-heterogeneous", "ar1", "ar1-heterogeneous", "toeplitz", "toeplitz-heterogeneous")) {
  run_case(paste0("trial-", s, "-reml"), "trial.csv", trial_spec(s, "reml"), trial_formula)
}
run_case("trial-unstructured-ml", "trial.csv", trial_spec("unstructured", "ml"), trial_formula, emm = FALSE)
