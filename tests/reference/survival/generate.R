# Reference values for the Cox proportional hazards engine, computed with R's survival package
# (3.x, Debian r-cran-survival) as an independent oracle: coxph, cox.zph, residuals.coxph
# (martingale, deviance, score, schoenfeld, scaledsch, dfbeta, dfbetas), survfit, survdiff and
# the concordance coxph reports.
#
# Run from the repository root:  Rscript tests/reference/survival/generate.R
# Writes each case's data to tests/reference/survival/data/ (the open datasets lung, veteran,
# ovarian and colon as shipped with the survival package, and invented trial-shaped data made
# here with a fixed seed), its model specification to models/ and R's answers to values/.

suppressPackageStartupMessages({
  library(jsonlite)
  library(survival)
})

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
root <- "tests/reference/survival"
for (d in c("data", "models", "values")) dir.create(file.path(root, d), showWarnings = FALSE, recursive = TRUE)
ctrl <- coxph.control(eps = 1e-12, toler.chol = 1e-13, iter.max = 100)

# the engine's level order: numeric when every level is a number, else code point
order_levels <- function(x) {
  u <- unique(as.character(x[!is.na(x)]))
  num <- suppressWarnings(as.numeric(u))
  if (all(!is.na(num))) u[order(num, u, method = "radix")] else sort(u, method = "radix")
}
num <- function(x) unname(as.numeric(x))

write_case_data <- function(df, name) {
  path <- file.path(root, "data", paste0(name, ".csv"))
  write.csv(df, path, row.names = FALSE, na = "")
  path
}

read_case_data <- function(path) {
  read.csv(path, na.strings = c("", "NA", "."), stringsAsFactors = FALSE, check.names = FALSE)
}

km_curve <- function(time, event) {
  s <- survfit(Surv(time, event) ~ 1)
  list(time = num(s$time), estimate = num(s$surv), lower = num(s$lower), upper = num(s$upper), atRisk = num(s$n.risk))
}

run_case <- function(name, source, df, spec) {
  data_path <- write_case_data(df, name)
  writeLines(toJSON(spec, auto_unbox = TRUE, pretty = TRUE), file.path(root, "models", paste0(name, ".json")))
  d <- read_case_data(data_path)
  d$.row <- seq_len(nrow(d))
  mains <- vapply(spec$terms, function(t) t$variable, "")
  used <- c(spec$response, spec$status$column, mains, unlist(spec$strata), spec$weights, spec$offset, spec$cluster)
  d <- d[complete.cases(d[, used, drop = FALSE]), , drop = FALSE]
  for (t in spec$terms) {
    v <- t$variable
    if (isTRUE(t$categorical) || !is.numeric(d[[v]])) {
      labels <- as.character(d[[v]])
      lev <- order_levels(labels)
      ref <- if (is.null(t$reference)) lev[1] else t$reference
      f <- factor(labels, levels = lev)
      contrasts(f) <- contr.treatment(lev, base = match(ref, lev))
      d[[v]] <- f
    }
  }
  d$.time <- d[[spec$response]]
  d$.event <- as.integer(as.character(d[[spec$status$column]]) %in% as.character(unlist(spec$status$event)))
  # the times coxph, survfit and survdiff work with after merging near-ties (aeqSurv, their default)
  d$.time <- as.matrix(aeqSurv(Surv(d$.time, d$.event)))[, 1]
  rhs <- paste0("`", mains, "`", collapse = " + ")
  if (length(spec$strata) > 0) rhs <- paste0(rhs, " + strata(", paste0("`", unlist(spec$strata), "`", collapse = ", "), ")")
  if (!is.null(spec$offset)) rhs <- paste0(rhs, " + offset(`", spec$offset, "`)")
  if (!is.null(spec$cluster)) rhs <- paste0(rhs, " + cluster(`", spec$cluster, "`)")
  form <- as.formula(paste("Surv(.time, .event) ~", rhs))
  ties <- if (is.null(spec$ties)) "efron" else spec$ties
  args <- list(form, data = d, ties = ties, control = ctrl, x = TRUE, model = TRUE)
  if (!is.null(spec$weights)) {
    d$.w <- as.numeric(d[[spec$weights]]) # double: cox.zph's C code refuses integer weights
    args$weights <- quote(.w)
    args$data <- d
  }
  fit <- do.call(coxph, args)
  sm <- summary(fit)
  robust <- "robust se" %in% colnames(sm$coefficients)
  co <- sm$coefficients
  ci <- sm$conf.int
  se <- num(co[, "se(coef)"])
  transform <- if (is.null(spec$proportionalHazards$transform)) "km" else spec$proportionalHazards$transform
  zph <- cox.zph(fit, transform = transform)
  tbl <- zph$table
  wts <- if (is.null(spec$weights)) rep(1, nrow(d)) else d[[spec$weights]]

  # Schoenfeld residuals come out in R's internal order: stratum, time, events first
  mf <- model.frame(fit)
  scol <- grep("^strata\\(", names(mf))
  nstrat <- if (length(scol)) as.numeric(mf[[scol]]) else rep(1, nrow(d))
  ord <- order(nstrat, d$.time, -d$.event)
  event_rows <- d$.row[ord][d$.event[ord] == 1]
  sch <- as.matrix(residuals(fit, type = "schoenfeld"))
  ssch <- as.matrix(residuals(fit, type = "scaledsch"))
  stopifnot(nrow(sch) == length(event_rows), all(abs(as.numeric(rownames(sch)) - d$.time[ord][d$.event[ord] == 1]) < 1e-8))

  # Kaplan–Meier per arm (and per arm within stratum); log-rank stratified as the model
  survival <- list()
  lr <- NULL
  if (!is.null(spec$treatment)) {
    arm <- d[[spec$treatment]]
    for (lv in levels(arm)) {
      k <- arm == lv
      if (any(k)) survival[[length(survival) + 1]] <- c(list(level = lv, stratum = NULL), km_curve(d$.time[k], d$.event[k]))
    }
    if (length(spec$strata) > 0) {
      slabel <- apply(sapply(unlist(spec$strata), function(s) paste0(s, "=", trimws(as.character(d[[s]])))), 1, paste, collapse = ", ")
      for (sl in sort(unique(slabel), method = "radix")) for (lv in levels(arm)) {
        k <- arm == lv & slabel == sl
        if (any(k)) survival[[length(survival) + 1]] <- c(list(level = lv, stratum = sl), km_curve(d$.time[k], d$.event[k]))
      }
    }
    lrform <- paste0("Surv(.time, .event) ~ `", spec$treatment, "`")
    if (length(spec$strata) > 0) lrform <- paste0(lrform, " + strata(", paste0("`", unlist(spec$strata), "`", collapse = ", "), ")")
    sd <- survdiff(as.formula(lrform), data = d)
    lr <- list(statistic = num(sd$chisq), df = length(sd$n) - 1, p = pchisq(sd$chisq, length(sd$n) - 1, lower.tail = FALSE))
  }
  test <- function(stat, df) list(statistic = num(stat), df = df, p = pchisq(num(stat), df, lower.tail = FALSE))
  # robust score test: coxph computes it from the score residuals at linear predictor 0, which
  # drops an offset; with an offset, residuals.coxph is asked for them at the offset instead
  rscore <- fit$rscore
  if (robust && !is.null(spec$offset)) {
    fit0 <- fit
    fit0$linear.predictors <- d[[spec$offset]]
    cl <- if (is.null(spec$cluster)) seq_len(nrow(d)) else d[[spec$cluster]]
    r0 <- as.matrix(residuals(fit0, type = "score", collapse = cl, weighted = TRUE))
    u0 <- colSums(r0)
    rscore <- drop(u0 %*% solve(crossprod(r0), u0))
  }

  out <- list(
    case = name,
    source = source,
    oracle = paste0("R ", getRversion(), ", survival ", packageVersion("survival")),
    data = paste0("data/", name, ".csv"),
    model = paste0("models/", name, ".json"),
    n = fit$n,
    events = fit$nevent,
    coefficients = lapply(seq_len(nrow(co)), function(j) list(
      rName = rownames(co)[j],
      estimate = num(co[j, "coef"]),
      se = se[j],
      robustSe = if (robust) num(co[j, "robust se"]) else NULL,
      statistic = num(co[j, "z"]),
      p = num(co[j, "Pr(>|z|)"]),
      ratio = num(ci[j, "exp(coef)"]),
      ratioLower = num(ci[j, "lower .95"]),
      ratioUpper = num(ci[j, "upper .95"])
    )),
    fit = list(logLik = fit$loglik[2], logLikNull = fit$loglik[1], concordance = num(fit$concordance["concordance"]), iter = fit$iter),
    tests = list(
      likelihoodRatio = test(2 * diff(fit$loglik), length(fit$coefficients)),
      wald = test(fit$wald.test, length(fit$coefficients)),
      score = test(fit$score, length(fit$coefficients)),
      robustScore = if (robust) test(rscore, length(fit$coefficients)) else NULL,
      logRank = lr,
      proportionalHazards = list(
        transform = transform,
        terms = lapply(seq_len(nrow(tbl) - 1), function(i) list(term = rownames(tbl)[i], statistic = num(tbl[i, "chisq"]), df = num(tbl[i, "df"]), p = num(tbl[i, "p"]))),
        global = list(statistic = num(tbl["GLOBAL", "chisq"]), df = num(tbl["GLOBAL", "df"]), p = num(tbl["GLOBAL", "p"]))
      )
    ),
    observations = list(
      row = d$.row,
      martingale = num(residuals(fit, type = "martingale")),
      deviance = num(residuals(fit, type = "deviance")),
      score = unname(lapply(seq_along(fit$coefficients), function(j) num(as.matrix(residuals(fit, type = "score"))[, j]))),
      dfbeta = unname(lapply(seq_along(fit$coefficients), function(j) num(as.matrix(residuals(fit, type = "dfbeta"))[, j]))),
      dfbetas = unname(lapply(seq_along(fit$coefficients), function(j) num(as.matrix(residuals(fit, type = "dfbetas"))[, j])))
    ),
    schoenfeld = list(
      row = event_rows,
      time = num(rownames(sch)),
      residual = unname(lapply(seq_len(ncol(sch)), function(j) num(sch[, j]))),
      scaled = unname(lapply(seq_len(ncol(ssch)), function(j) num(ssch[, j])))
    ),
    survival = survival
  )
  writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, na = "null", null = "null", pretty = FALSE),
             file.path(root, "values", paste0(name, ".json")))
  invisible(fit)
}

# ---- open datasets shipped with R's survival package (Therneau, survival 3.x; see its help pages)
lung_df <- survival::lung[, c("time", "status", "age", "sex", "ph.ecog", "wt.loss")]
run_case("lung-efron", "survival::lung (NCCTG advanced lung cancer; Loprinzi et al. 1994)", lung_df, list(
  family = "cox", response = "time", status = list(column = "status", event = I(2)),
  terms = list(list(variable = "sex", categorical = TRUE), list(variable = "age"), list(variable = "ph.ecog"), list(variable = "wt.loss")),
  treatment = "sex", ties = "efron", proportionalHazards = list(transform = "km")))

vet_df <- survival::veteran
vet_df$celltype <- as.character(vet_df$celltype)
run_case("veteran-breslow-rank", "survival::veteran (VA lung cancer trial; Kalbfleisch and Prentice 1980)", vet_df, list(
  family = "cox", response = "time", status = list(column = "status", event = I(1)),
  terms = list(list(variable = "trt", categorical = TRUE), list(variable = "celltype", reference = "squamous"), list(variable = "karno"), list(variable = "age")),
  treatment = "trt", ties = "breslow", proportionalHazards = list(transform = "rank")))

# times that differ only in the tenth significant digit count as tied (R's aeqSurv, on by default)
vet_near <- survival::veteran
vet_near$celltype <- as.character(vet_near$celltype)
nudge <- seq(2, nrow(vet_near), by = 3)
vet_near$time[nudge] <- vet_near$time[nudge] * (1 + 3e-10)
run_case("veteran-near-ties", "survival::veteran, every third time multiplied by 1 + 3e-10 (this script)", vet_near, list(
  family = "cox", response = "time", status = list(column = "status", event = I(1)),
  terms = list(list(variable = "trt", categorical = TRUE), list(variable = "karno")),
  treatment = "trt", ties = "efron", proportionalHazards = list(transform = "km")))

ov_df <- survival::ovarian
run_case("ovarian-strata-identity", "survival::ovarian (ovarian cancer trial; Edmonson et al. 1979)", ov_df, list(
  family = "cox", response = "futime", status = list(column = "fustat", event = I(1)),
  terms = list(list(variable = "rx", categorical = TRUE), list(variable = "age")),
  treatment = "rx", strata = I("resid.ds"), ties = "efron", proportionalHazards = list(transform = "identity")))

colon_df <- survival::colon[, c("id", "time", "status", "rx", "sex", "age", "nodes", "etype")]
colon_df$rx <- as.character(colon_df$rx)
run_case("colon-cluster-log", "survival::colon (adjuvant colon cancer trial; Moertel et al. 1990), recurrence and death rows per patient", colon_df, list(
  family = "cox", response = "time", status = list(column = "status", event = I(1)),
  terms = list(list(variable = "rx", reference = "Obs"), list(variable = "sex", categorical = TRUE), list(variable = "age"), list(variable = "nodes")),
  treatment = "rx", strata = I("etype"), cluster = "id", id = "id", ties = "efron", proportionalHazards = list(transform = "log")))

# ---- invented trial-shaped data (no real people): two arms, two stratification factors,
# follow-up in whole days (so event times tie), ADaM-style censoring flag CNSR (0 = event)
set.seed(20261205)
n <- 320
trial <- data.frame(
  USUBJID = sprintf("INV-%04d", seq_len(n)),
  TRTP = sample(c("Placebo", "Active"), n, replace = TRUE),
  STRAT1 = sample(c("LOW", "HIGH"), n, replace = TRUE),
  STRAT2 = sample(c("R1", "R2", "R3"), n, replace = TRUE),
  SITE = sprintf("S%02d", sample(1:24, n, replace = TRUE)),
  AGE = round(rnorm(n, 61, 9)),
  BASE = round(rnorm(n, 5, 2), 1),
  stringsAsFactors = FALSE
)
lin <- -0.45 * (trial$TRTP == "Active") + 0.025 * (trial$AGE - 61) + 0.12 * (trial$BASE - 5) +
  0.5 * (trial$STRAT1 == "HIGH") + c(R1 = 0, R2 = 0.3, R3 = -0.2)[trial$STRAT2]
# a hazard that rises over time in the active arm, so proportional hazards is visibly questionable
ev <- rweibull(n, shape = ifelse(trial$TRTP == "Active", 1.4, 1), scale = 220 * exp(-lin))
cens <- runif(n, 60, 400)
trial$AVAL <- pmax(1, ceiling(pmin(ev, cens) / 7) * 7)
trial$CNSR <- ifelse(ev <= cens, 0, 1)
trial$W <- round(runif(n, 0.5, 2), 2)
trial$OFF <- round(rnorm(n, 0, 0.2), 2)
trial$AGE[c(7, 88, 190)] <- NA
trial$CNSR[c(41)] <- NA

run_case("trial-efron-weighted", "invented (seeded) trial-shaped data, this script", trial, list(
  family = "cox", response = "AVAL", status = list(column = "CNSR", event = I(0)),
  terms = list(list(variable = "TRTP", reference = "Placebo"), list(variable = "AGE"), list(variable = "BASE")),
  treatment = "TRTP", strata = c("STRAT1", "STRAT2"), ties = "efron", weights = "W", offset = "OFF", id = "USUBJID",
  proportionalHazards = list(transform = "km")))

run_case("trial-breslow-cluster", "invented (seeded) trial-shaped data, this script", trial, list(
  family = "cox", response = "AVAL", status = list(column = "CNSR", event = I(0)),
  terms = list(list(variable = "TRTP", reference = "Placebo"), list(variable = "AGE"), list(variable = "BASE"), list(variable = "STRAT2")),
  treatment = "TRTP", strata = I("STRAT1"), ties = "breslow", cluster = "SITE", id = "USUBJID",
  proportionalHazards = list(transform = "identity")))

trial_w <- trial
trial_w$FREQ <- rep_len(c(1, 2, 3, 1, 2), nrow(trial_w))
run_case("trial-whole-weights-cluster", "invented (seeded) trial-shaped data, this script; whole-number case weights", trial_w, list(
  family = "cox", response = "AVAL", status = list(column = "CNSR", event = I(0)),
  terms = list(list(variable = "TRTP", reference = "Placebo"), list(variable = "BASE")),
  treatment = "TRTP", strata = I("STRAT2"), ties = "efron", weights = "FREQ", offset = "OFF", cluster = "SITE", id = "USUBJID",
  proportionalHazards = list(transform = "rank")))

# ---- monotone likelihood: no events at all in the active arm, so its log hazard ratio runs to −∞
set.seed(4417)
m <- 40
mono <- data.frame(
  USUBJID = sprintf("MON-%03d", seq_len(m)),
  TRTP = rep(c("Placebo", "Active"), each = m / 2),
  AGE = round(rnorm(m, 60, 8)),
  AVAL = round(runif(m, 10, 300)),
  stringsAsFactors = FALSE
)
mono$CNSR <- ifelse(mono$TRTP == "Active", 1, rbinom(m, 1, 0.3))
invisible(write_case_data(mono, "monotone-no-events-in-arm"))
mono_spec <- list(family = "cox", response = "AVAL", status = list(column = "CNSR", event = I(0)),
  terms = list(list(variable = "TRTP", reference = "Placebo"), list(variable = "AGE")), treatment = "TRTP")
writeLines(toJSON(mono_spec, auto_unbox = TRUE, pretty = TRUE), file.path(root, "models", "monotone-no-events-in-arm.json"))
mono$TRTP <- relevel(factor(mono$TRTP), ref = "Placebo")
warned <- character(0)
mfit <- withCallingHandlers(
  coxph(Surv(AVAL, CNSR == 0) ~ TRTP + AGE, data = mono, control = ctrl),
  warning = function(w) { warned <<- c(warned, conditionMessage(w)); invokeRestart("muffleWarning") })
writeLines(toJSON(list(case = "monotone-no-events-in-arm", rWarning = warned, rEstimate = num(coef(mfit))),
                  auto_unbox = TRUE, digits = NA, pretty = FALSE),
           file.path(root, "values", "monotone-no-events-in-arm.json"))

# ---- monotone likelihood along a continuous covariate: every event has the largest MARKER of
# those still at risk, so its log hazard ratio runs to +∞ (R's coxph warns that it may be infinite)
set.seed(9203)
k <- 30
ordered_case <- data.frame(USUBJID = sprintf("ORD-%03d", seq_len(k)), AVAL = sort(round(runif(k, 5, 400))), stringsAsFactors = FALSE)
ordered_case$AVAL <- ordered_case$AVAL + seq_len(k) / 10
ordered_case$CNSR <- rbinom(k, 1, 0.3)
ordered_case$MARKER <- round(rev(seq_len(k)) + rnorm(k, 0, 0.1), 2)
ordered_case$TRTP <- sample(c("Placebo", "Active"), k, replace = TRUE)
invisible(write_case_data(ordered_case, "monotone-marker-ordering"))
ord_spec <- list(family = "cox", response = "AVAL", status = list(column = "CNSR", event = I(0)),
  terms = list(list(variable = "TRTP", reference = "Placebo"), list(variable = "MARKER")), treatment = "TRTP")
writeLines(toJSON(ord_spec, auto_unbox = TRUE, pretty = TRUE), file.path(root, "models", "monotone-marker-ordering.json"))
warned <- character(0)
ofit <- withCallingHandlers(
  coxph(Surv(AVAL, CNSR == 0) ~ relevel(factor(TRTP), ref = "Placebo") + MARKER, data = ordered_case),
  warning = function(w) { warned <<- c(warned, conditionMessage(w)); invokeRestart("muffleWarning") })
writeLines(toJSON(list(case = "monotone-marker-ordering", rWarning = warned, rEstimate = num(coef(ofit))),
                  auto_unbox = TRUE, digits = NA, pretty = FALSE),
           file.path(root, "values", "monotone-marker-ordering.json"))
