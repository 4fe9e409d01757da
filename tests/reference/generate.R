# Reference values for the linear-model engine, computed with R as an independent oracle:
# stats::lm and its influence measures, car (vif, leveneTest), lmtest (bptest, resettest),
# sandwich (vcovHC), nortest (ad.test, lillie.test) and emmeans.
#
# Run from the repository root:  Rscript tests/reference/generate.R
# Writes the input data to tests/reference/data/, the model specification of each case to
# tests/reference/models/ and R's answers to tests/reference/values/. The committed files let
# the test suite run without R.

suppressPackageStartupMessages({
  library(jsonlite)
  library(car)
  library(lmtest)
  library(sandwich)
  library(nortest)
  library(emmeans)
  library(MASS)
})

RNGkind("Mersenne-Twister", "Inversion", "Rejection")
root <- "tests/reference"
for (d in c("data", "models", "values")) dir.create(file.path(root, d), showWarnings = FALSE, recursive = TRUE)

# ---- ordering rules of the engine: numeric order when all levels are numbers, else code point
order_levels <- function(x) {
  u <- unique(as.character(x[!is.na(x)]))
  num <- suppressWarnings(as.numeric(u))
  if (all(!is.na(num))) u[order(num, u, method = "radix")] else sort(u, method = "radix")
}

write_case_data <- function(df, name) {
  path <- file.path(root, "data", paste0(name, ".csv"))
  write.csv(df, path, row.names = FALSE, na = "")
  path
}

read_case_data <- function(path) {
  read.csv(path, na.strings = c("", "NA", "."), stringsAsFactors = FALSE, check.names = FALSE)
}

num <- function(x) unname(as.numeric(x))

# Builds the R formula and data frame for a model specification (list as in the JSON).
prepare <- function(spec, d) {
  mains <- Filter(function(t) is.null(t$interaction), spec$terms)
  inter <- Filter(function(t) !is.null(t$interaction), spec$terms)
  used <- c(spec$response, vapply(mains, function(t) t$variable, ""), spec$weights, spec$offset)
  keep <- complete.cases(d[, used, drop = FALSE])
  rows <- which(keep)
  d <- d[keep, , drop = FALSE]
  for (t in mains) {
    v <- t$variable
    categorical <- isTRUE(t$categorical) || !is.numeric(d[[v]])
    if (categorical) {
      labels <- as.character(d[[v]])
      lev <- order_levels(labels)
      ref <- if (is.null(t$reference)) lev[1] else t$reference
      f <- factor(labels, levels = lev)
      contrasts(f) <- contr.treatment(lev, base = match(ref, lev))
      d[[v]] <- f
    }
  }
  rhs <- c(vapply(mains, function(t) paste0("`", t$variable, "`"), ""),
           vapply(inter, function(t) paste(paste0("`", t$interaction, "`"), collapse = ":"), ""))
  if (length(rhs) == 0) rhs <- "1"
  if (isFALSE(spec$intercept)) rhs <- c("0", rhs)
  f <- paste0("`", spec$response, "` ~ ", paste(rhs, collapse = " + "))
  if (!is.null(spec$offset)) f <- paste0(f, " + offset(`", spec$offset, "`)")
  list(formula = as.formula(f), data = d, rows = rows, mains = mains)
}

htest <- function(t) list(statistic = num(t$statistic), p = num(t$p.value))

reference_values <- function(name, spec, d, source, means_weighting = "equal") {
  prep <- prepare(spec, d)
  dd <- prep$data
  w <- if (is.null(spec$weights)) NULL else dd[[spec$weights]]
  fit <- if (is.null(w)) lm(prep$formula, data = dd) else lm(prep$formula, data = dd, weights = w)
  X <- model.matrix(fit)
  n <- nrow(X)
  p <- ncol(X)
  sm <- summary(fit)
  ci <- confint(fit)
  cf <- sm$coefficients
  sw <- if (is.null(w)) rep(1, n) else sqrt(w)
  ew <- sw * residuals(fit)

  coefficients <- lapply(seq_len(p), function(j) list(
    rName = colnames(X)[j], estimate = cf[j, 1], se = cf[j, 2], statistic = cf[j, 3], p = cf[j, 4],
    lower = ci[j, 1], upper = ci[j, 2]))
  robust <- lapply(c(HC0 = "HC0", HC1 = "HC1", HC2 = "HC2", HC3 = "HC3"),
                   function(t) num(sqrt(diag(vcovHC(fit, type = t)))))
  fs <- sm$fstatistic
  fitstats <- list(sigma = sm$sigma, rSquared = sm$r.squared, adjRSquared = sm$adj.r.squared,
                   fStatistic = num(fs[1]), fP = num(pf(fs[1], fs[2], fs[3], lower.tail = FALSE)),
                   logLik = num(logLik(fit)), aic = AIC(fit))
  if (!is.null(spec$offset)) {
    # R 4.2's summary.lm counts the offset in the model sum of squares; the overall F test of
    # the coefficients is the nested comparison with the intercept-and-offset model
    null_fit <- update(fit, as.formula(paste0(". ~ 1 + offset(`", spec$offset, "`)")))
    a <- anova(null_fit, fit)
    r2 <- 1 - a$RSS[2] / a$RSS[1]
    fitstats$rSquared <- r2
    fitstats$adjRSquared <- 1 - (1 - r2) * (n - 1) / fit$df.residual
    fitstats$fStatistic <- a$F[2]
    fitstats$fP <- a$`Pr(>F)`[2]
  }
  db <- dfbetas(fit)
  partial <- residuals(fit, type = "partial")
  observations <- list(
    row = prep$rows, fitted = num(fitted(fit)), residual = num(residuals(fit)),
    leverage = num(hatvalues(fit)), studentizedInternal = num(rstandard(fit)),
    studentizedExternal = num(rstudent(fit)), cooksDistance = num(cooks.distance(fit)),
    dffits = num(dffits(fit)), dfbetas = lapply(seq_len(p), function(j) num(db[, j])),
    partialResiduals = lapply(seq_len(ncol(partial)), function(j) num(partial[, j])))

  tests <- list()
  tests$shapiroWilk <- htest(shapiro.test(ew))
  tests$andersonDarling <- htest(ad.test(ew))
  tests$lilliefors <- htest(lillie.test(ew))
  if (is.null(w)) {
    bp <- bptest(fit)
    tests$breuschPagan <- list(statistic = num(bp$statistic), df = num(bp$parameter), p = num(bp$p.value))
  } else {
    # lmtest::bptest's studentized formula applied to the weighted residuals sqrt(w)*e
    u <- ew^2 - mean(ew^2)
    aux <- lm.fit(X, u)
    stat <- n * sum(aux$fitted.values^2) / sum(u^2)
    df <- aux$rank - 1
    tests$breuschPagan <- list(statistic = stat, df = df, p = pchisq(stat, df, lower.tail = FALSE))
  }
  if (is.null(spec$reset_skip)) {
    if (is.null(w) && is.null(spec$offset)) {
      rs <- resettest(fit, power = 2:3, type = "fitted")
      tests$reset <- list(statistic = num(rs$statistic), df1 = num(rs$parameter[1]),
                          df2 = num(rs$parameter[2]), p = num(rs$p.value))
    } else {
      # RESET as a nested-model F test (resettest itself ignores prior weights and offsets)
      eta <- fitted(fit) - (if (is.null(spec$offset)) 0 else dd[[spec$offset]])
      dd$.eta2 <- eta^2
      dd$.eta3 <- eta^3
      big <- update(fit, . ~ . + .eta2 + .eta3, data = dd)
      a <- anova(fit, big)
      tests$reset <- list(statistic = a$F[2], df1 = a$Df[2], df2 = a$Res.Df[2], p = a$`Pr(>F)`[2])
    }
  }
  if (!is.null(spec$treatment)) {
    arm <- spec$treatment
    cont <- Filter(function(t) is.numeric(dd[[t$variable]]) && !isTRUE(t$categorical), prep$mains)
    covs <- vapply(cont, function(t) t$variable, "")
    inter <- Filter(function(t) !is.null(t$interaction), spec$terms)
    covs <- covs[!vapply(covs, function(cv) any(vapply(inter, function(t)
      length(t$interaction) == 2 && all(c(arm, cv) %in% t$interaction), TRUE)), TRUE)]
    hos_f <- function(cv) {
      add <- paste(paste0("`", arm, "`:`", cv, "`"), collapse = " + ")
      big <- update(fit, as.formula(paste(". ~ . +", add)))
      a <- anova(fit, big)
      list(statistic = a$F[2], df1 = a$Df[2], df2 = a$Res.Df[2], p = a$`Pr(>F)`[2])
    }
    if (length(covs) > 0) {
      tests$homogeneityOfSlopes <- c(hos_f(covs), list(byCovariate = lapply(covs, function(cv)
        c(list(covariate = cv), hos_f(cv)))))
    }
    lt <- leveneTest(ew ~ dd[[arm]], center = median)
    tests$brownForsythe <- list(statistic = lt$`F value`[1], df1 = lt$Df[1], df2 = lt$Df[2], p = lt$`Pr(>F)`[1])

    emm_summary <- function(vc) {
      e <- if (is.null(vc)) emmeans(fit, arm, weights = means_weighting)
           else emmeans(fit, arm, weights = means_weighting, vcov. = vc)
      s <- summary(e, infer = c(TRUE, FALSE))
      ref <- match(prep$mains[[which(vapply(prep$mains, function(t) t$variable == arm, TRUE))]]$reference %||% levels(dd[[arm]])[1],
                   levels(dd[[arm]]))
      ct <- summary(contrast(e, method = "trt.vs.ctrl", ref = ref, adjust = "none"), infer = c(TRUE, TRUE))
      list(means = lapply(seq_len(nrow(s)), function(i) list(level = as.character(s[[arm]][i]),
             estimate = s$emmean[i], se = s$SE[i], lower = s$lower.CL[i], upper = s$upper.CL[i])),
           contrasts = lapply(seq_len(nrow(ct)), function(i) list(label = as.character(ct$contrast[i]),
             estimate = ct$estimate[i], se = ct$SE[i], statistic = ct$t.ratio[i], p = ct$p.value[i],
             lower = ct$lower.CL[i], upper = ct$upper.CL[i])))
    }
    model_based <- emm_summary(NULL)
    hc3 <- emm_summary(vcovHC(fit, type = "HC3"))
    # the grid emmeans averages over: covariates at their means, cells of the other factors
    # with equal weights or weights proportional to their frequencies over all arms
    g <- ref_grid(fit)@grid
    cont_names <- vapply(cont, function(t) t$variable, "")
    grid_covariates <- lapply(intersect(cont_names, names(g)), function(v) list(variable = v, value = unique(g[[v]])))
    other_factors <- setdiff(vapply(Filter(function(t) is.factor(dd[[t$variable]]), prep$mains), function(t) t$variable, ""), arm)
    grid_cells <- if (length(other_factors) == 0) list(list(levels = character(0), weight = 1)) else {
      agg <- aggregate(g$.wgt., by = g[other_factors], FUN = sum)
      wts <- if (means_weighting == "proportional") agg$x / sum(agg$x) else rep(1 / nrow(agg), nrow(agg))
      lapply(seq_len(nrow(agg)), function(i) list(levels = I(vapply(other_factors, function(f) as.character(agg[[f]][i]), "")), weight = wts[i]))
    }
    adjusted <- list(weighting = means_weighting, means = model_based$means, contrasts = model_based$contrasts,
                     hc3Means = hc3$means, hc3Contrasts = hc3$contrasts,
                     grid = list(covariates = grid_covariates, factors = I(other_factors), cells = grid_cells))
  } else adjusted <- NULL

  n_terms <- length(attr(terms(fit), "term.labels"))
  vif_rows <- NULL
  if (n_terms >= 2) {
    v <- suppressWarnings(suppressMessages(car::vif(fit, type = "terms")))
    if (is.matrix(v)) {
      vif_rows <- lapply(seq_len(nrow(v)), function(i) list(term = rownames(v)[i], gvif = v[i, 1], df = v[i, 2], adjusted = v[i, 3]))
    } else {
      vif_rows <- lapply(seq_along(v), function(i) list(term = names(v)[i], gvif = num(v[i]), df = 1, adjusted = sqrt(num(v[i]))))
    }
  }
  # predictor-wise GVIF (each variable with the terms of the variables it interacts with);
  # car gives it for unweighted linear models only
  vif_predictor_rows <- NULL
  if (n_terms >= 2 && is.null(w)) {
    model_vars <- unique(c(vapply(prep$mains, function(t) t$variable, "")))
    v <- suppressWarnings(suppressMessages(car::vif(fit, type = "predictor")))
    rows <- if (is.data.frame(v)) {
      lapply(seq_len(nrow(v)), function(i) list(predictor = rownames(v)[i], gvif = v[i, 1], df = v[i, 2], adjusted = v[i, 3]))
    } else {
      preds <- all.vars(formula(fit)[-2])
      lapply(seq_along(v), function(i) list(predictor = preds[i], gvif = num(v[i]), df = 1, adjusted = sqrt(num(v[i]))))
    }
    vif_predictor_rows <- Filter(function(r) r$predictor %in% model_vars, rows)
  }

  spec$reset_skip <- NULL
  model_path <- file.path(root, "models", paste0(name, ".json"))
  writeLines(toJSON(spec, auto_unbox = TRUE, pretty = TRUE), model_path)
  out <- list(case = name, source = source, data = paste0("data/", name, ".csv"), model = paste0("models/", name, ".json"),
              meansWeighting = means_weighting, rVersion = R.version.string,
              n = n, rank = fit$rank, dfResidual = fit$df.residual, excluded = nrow(d) - n,
              coefficients = coefficients, robustSE = robust, fit = fitstats, observations = observations,
              tests = tests, vif = if (is.null(vif_rows)) NA else vif_rows,
              vifByPredictor = if (is.null(vif_predictor_rows)) NA else vif_predictor_rows,
              vcov = lapply(seq_len(ncol(vcov(fit))), function(i) num(vcov(fit)[i, ])),
              adjustedMeans = if (is.null(adjusted)) NA else adjusted)
  writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, na = "null", pretty = FALSE),
             file.path(root, "values", paste0(name, ".json")))
  cat("wrote", name, "\n")
}

`%||%` <- function(a, b) if (is.null(a)) b else a

run_case <- function(name, df, spec, source, means_weighting = "equal") {
  path <- write_case_data(df, name)
  reference_values(name, spec, read_case_data(path), source, means_weighting)
}

# ---- cases ------------------------------------------------------------------------------

# 1. several continuous covariates (R datasets::mtcars, Henderson and Velleman 1981)
cars <- cbind(car = rownames(mtcars), mtcars)
run_case("mtcars-continuous", cars,
  list(response = "mpg", family = "gaussian", terms = list(list(variable = "wt"), list(variable = "hp"),
       list(variable = "disp"), list(variable = "qsec")), id = "car"),
  "R datasets::mtcars; lm, influence measures, car::vif, lmtest, sandwich, nortest")

# 2. missing cells written three ways ("", NA, "."), treatment given as numbers (mtcars)
miss <- cars
miss$hp <- as.character(miss$hp); miss$wt <- as.character(miss$wt); miss$am <- as.character(miss$am)
miss$hp[c(3, 17)] <- ""
miss$wt[c(8)] <- "NA"
miss$am[c(25)] <- "."
path <- write_case_data(miss, "mtcars-missing")
# write.csv quotes the text cells; the engine reads all three codes as missing
reference_values("mtcars-missing",
  list(response = "mpg", family = "gaussian", terms = list(list(variable = "am", categorical = TRUE, reference = "0"),
       list(variable = "wt"), list(variable = "hp")), id = "car", treatment = "am"),
  read_case_data(path), "R datasets::mtcars with cells removed; lm, emmeans, car::leveneTest")

# 3. two categoricals with their interaction, reference not first in order (datasets::warpbreaks)
run_case("warpbreaks-interaction", warpbreaks,
  list(response = "breaks", family = "gaussian", terms = list(list(variable = "wool"),
       list(variable = "tension", reference = "L"), list(interaction = list("wool", "tension"))),
       treatment = "tension", reset_skip = TRUE),
  "R datasets::warpbreaks; lm, emmeans (equal weights over wool), car::leveneTest")

# 4. categorical-by-continuous interaction, reference not first (datasets::ToothGrowth)
run_case("toothgrowth-slopes", ToothGrowth,
  list(response = "len", family = "gaussian", terms = list(list(variable = "supp", reference = "VC"),
       list(variable = "dose"), list(interaction = list("supp", "dose"))), treatment = "supp"),
  "R datasets::ToothGrowth; lm, emmeans at mean dose, car::vif")

# 5. one factor (datasets::InsectSprays); RESET has nothing to test with one factor
run_case("insectsprays-oneway", InsectSprays,
  list(response = "count", family = "gaussian", terms = list(list(variable = "spray", reference = "C")),
       treatment = "spray", reset_skip = TRUE),
  "R datasets::InsectSprays; lm, emmeans, car::leveneTest")

# 6. four categoricals, proportional averaging of the other factors (MASS::quine)
run_case("quine-factors", quine,
  list(response = "Days", family = "gaussian", terms = list(list(variable = "Eth"), list(variable = "Sex"),
       list(variable = "Age"), list(variable = "Lrn")), treatment = "Eth"),
  "MASS::quine; lm, emmeans with proportional weights, car::vif", means_weighting = "proportional")

# 7 and 8. invented trial: change from baseline by arm, baseline and age covariates, sex; seeded
set.seed(20261202)
nt <- 150
arm <- rep(c("Placebo", "Low dose", "High dose"), each = nt / 3)
sex <- sample(c("F", "M"), nt, replace = TRUE)
base <- round(rnorm(nt, 50, 8), 1)
age <- round(runif(nt, 25, 75))
effect <- c(Placebo = 0, "Low dose" = -2.5, "High dose" = -5)[arm]
sd_arm <- c(Placebo = 4, "Low dose" = 5, "High dose" = 7)[arm]
chg <- round(3 + effect - 0.3 * (base - 50) + 0.05 * (age - 50) + ifelse(sex == "M", 1, 0) + rnorm(nt, 0, sd_arm), 2)
w <- round(runif(nt, 0.5, 2), 3)
trial <- data.frame(subject = sprintf("S%03d", seq_len(nt)), arm = arm, sex = sex, base = base, age = age,
                    w = w, chg = chg, stringsAsFactors = FALSE)
trial$chg[c(7, 61)] <- NA
trial$base[c(99)] <- NA
run_case("trial-ancova", trial,
  list(response = "chg", family = "gaussian", terms = list(list(variable = "arm", reference = "Placebo"),
       list(variable = "base"), list(variable = "age"), list(variable = "sex")), id = "subject", treatment = "arm"),
  "invented trial data (R set.seed(20261202)); lm, emmeans, car, lmtest, sandwich, nortest")
run_case("trial-weighted", trial,
  list(response = "chg", family = "gaussian", terms = list(list(variable = "arm", reference = "Placebo"),
       list(variable = "base"), list(interaction = list("arm", "base"))), weights = "w", id = "subject", treatment = "arm"),
  "invented trial data (R set.seed(20261202)); weighted lm, emmeans, sandwich")

# 9. offset and a continuous-by-continuous interaction; seeded
set.seed(7)
m <- 60
x1 <- round(rnorm(m, 10, 2), 2)
x2 <- round(runif(m, 0, 5), 2)
off <- round(0.5 * x2, 3)
y <- round(2 + 0.8 * x1 - 0.6 * x2 + 0.1 * x1 * x2 + off + rt(m, 5), 3)
run_case("invented-offset", data.frame(y = y, x1 = x1, x2 = x2, off = off),
  list(response = "y", family = "gaussian", terms = list(list(variable = "x1"), list(variable = "x2"),
       list(interaction = list("x1", "x2"))), offset = "off"),
  "invented data (R set.seed(7)); lm with offset")

# 10. treatment by an uncentred baseline (mean about 50): the term-wise GVIF of the arm is large
# without any collinearity; the predictor-wise GVIF is not (car::vif(type = "predictor"))
run_case("trial-arm-by-baseline", trial,
  list(response = "chg", family = "gaussian", terms = list(list(variable = "arm", reference = "Placebo"),
       list(variable = "base"), list(variable = "age"), list(variable = "sex"), list(interaction = list("arm", "base"))),
       id = "subject", treatment = "arm"),
  "invented trial data (R set.seed(20261202)); lm with an arm-by-baseline interaction, car::vif by term and by predictor")

# 11. clear effects on many rows: t about 10 to 20 on about 1200 df, so t² < df and p-values far
# below 1e-15 must come out as R computes them (2 * pt(-|t|, df)), not as one minus a number near
# one (invented; seeded)
set.seed(11)
ns <- 1200
s_arm <- rep(c("Control", "Active"), each = ns / 2)
s_x <- round(runif(ns, 0, 10), 2)
s_y <- round(1 + 0.45 * (s_arm == "Active") + 0.05 * s_x + rnorm(ns, 0, 0.5), 4)
run_case("strong-effect", data.frame(subject = sprintf("E%02d", seq_len(ns)), arm = s_arm, x = s_x, y = s_y),
  list(response = "y", family = "gaussian", terms = list(list(variable = "arm", reference = "Control"), list(variable = "x")),
       id = "subject", treatment = "arm"),
  "invented data (R set.seed(11)); lm with p-values far below 1e-15 (summary.lm, emmeans)")

# ---- generalized linear models -------------------------------------------------------------
# R's glm with its influence functions, MASS::glm.nb for the negative binomial, MASS's profile
# intervals (confint), sandwich::vcovHC, car::vif, and emmeans counterfactual grids for the
# standardized (g-computation) arm means and risk differences. IRLS is run for its full
# iteration limit so that R's estimates are converged well past the 1e-6 comparison.

glm_reference_values <- function(name, spec, d, source) {
  prep <- prepare(spec, d)
  dd <- prep$data
  # epsilon below rounding: IRLS runs all maxit steps, so the last two iterates (whose weights R
  # keeps for its QR) agree to machine precision
  ctl <- glm.control(epsilon = 1e-16, maxit = 60)
  fam <- spec$family
  link <- if (is.null(spec$link)) NULL else spec$link
  if (fam == "binomial" && !is.null(spec$event)) {
    dd[[spec$response]] <- as.integer(dd[[spec$response]] == spec$event)
  }
  # prior weights (all one when the specification names none)
  dd$.w <- if (is.null(spec$weights)) rep(1, nrow(dd)) else dd[[spec$weights]]
  fit <- switch(fam,
    binomial = glm(prep$formula, family = binomial(link = if (is.null(link)) "logit" else link), data = dd, weights = .w, control = ctl),
    poisson = glm(prep$formula, family = poisson, data = dd, weights = .w, control = ctl),
    quasipoisson = glm(prep$formula, family = quasipoisson, data = dd, weights = .w, control = ctl),
    "negative-binomial" = glm.nb(prep$formula, data = dd, weights = .w, control = ctl))
  X <- model.matrix(fit)
  n <- nrow(X)
  p <- ncol(X)
  sm <- summary(fit)
  cf <- sm$coefficients
  wald <- confint.default(fit)
  prof <- tryCatch(suppressMessages(confint(fit)), error = function(e) NULL)
  phi <- sm$dispersion
  h <- hatvalues(fit)
  rp <- residuals(fit, type = "pearson")
  rd <- residuals(fit, type = "deviance")
  lr <- sign(rd) * sqrt(rd^2 + h * rp^2 / (1 - h))
  # the likelihood residual of Williams (1987); divided by sqrt(phi) only where phi is estimated
  studentized_external <- if (fam == "quasipoisson") lr / sqrt(phi) else lr
  db <- dfbetas(fit)
  partial <- residuals(fit, type = "partial")
  coefficients <- lapply(seq_len(p), function(j) list(
    rName = colnames(X)[j], estimate = cf[j, 1], se = cf[j, 2], statistic = cf[j, 3], p = cf[j, 4],
    lower = wald[j, 1], upper = wald[j, 2],
    profileLower = if (is.null(prof)) NA else prof[j, 1], profileUpper = if (is.null(prof)) NA else prof[j, 2]))
  robust <- lapply(c(HC0 = "HC0", HC1 = "HC1", HC2 = "HC2", HC3 = "HC3"),
                   function(t) num(sqrt(diag(vcovHC(fit, type = t)))))
  ll <- if (fam == "quasipoisson") NA else num(logLik(fit))
  fitstats <- list(deviance = deviance(fit), nullDeviance = fit$null.deviance, logLik = ll,
                   aic = if (fam == "quasipoisson") NA else AIC(fit), dispersion = phi,
                   pearsonChiSquare = sum(rp^2), dfResidual = fit$df.residual,
                   theta = if (fam == "negative-binomial") fit$theta else NA,
                   thetaSE = if (fam == "negative-binomial") fit$SE.theta else NA)
  observations <- list(row = prep$rows, fitted = num(fitted(fit)), residual = num(residuals(fit, type = "response")),
    pearson = num(rp), devianceResidual = num(rd), leverage = num(h),
    studentizedInternal = num(rstandard(fit)), studentizedExternal = num(studentized_external),
    cooksDistance = num(cooks.distance(fit)), dfbetas = lapply(seq_len(p), function(j) num(db[, j])),
    partialResiduals = lapply(seq_len(ncol(partial)), function(j) num(partial[, j])))

  test_kind <- if (fam == "quasipoisson") "F" else "Chisq"
  # Nested-model tests against a larger model: anova.glm (for quasi-Poisson its F test takes the
  # dispersion and residual df of the larger model), and for the negative binomial
  # MASS::anova.negbin, which re-estimates theta in the larger model (likelihood-ratio statistic
  # from the two log-likelihoods, each at its own theta).
  nested <- function(big) {
    if (fam == "negative-binomial") {
      a <- anova(fit, big)
      return(list(statistic = num(a[2, "LR stat."]), df = num(a[2, "   df"]), p = num(a[2, "Pr(Chi)"])))
    }
    a <- anova(fit, big, test = test_kind)
    list(statistic = if (fam == "quasipoisson") a$F[2] else a$Deviance[2], df = a$Df[2], p = a[2, ncol(a)])
  }
  refit <- function(f) if (fam == "negative-binomial") {
    glm.nb(f, data = dd, weights = .w, control = ctl)
  } else update(fit, f, data = dd, control = ctl)
  mains <- prep$mains
  cont <- Filter(function(t) is.numeric(dd[[t$variable]]) && !isTRUE(t$categorical), mains)
  linearity <- lapply(cont, function(t) {
    v <- t$variable
    dd[[paste0(".sq.", v)]] <<- (dd[[v]] - mean(dd[[v]]))^2
    big <- refit(update(prep$formula, as.formula(paste0(". ~ . + `.sq.", v, "`"))))
    c(list(term = paste(v, "squared")), nested(big))
  })
  smooths <- lapply(cont, function(t) {
    v <- t$variable
    pr <- partial[, match(v, colnames(partial))]
    l <- lowess(dd[[v]], pr)
    list(term = v, x = l$x, y = l$y)
  })
  hl <- NULL
  if (fam == "binomial") {
    # observed and expected events by tenths of the rows ordered by predicted risk
    mu <- fitted(fit)
    o <- order(mu, seq_along(mu))
    g <- 10
    stat <- 0
    for (k in 0:(g - 1)) {
      idx <- o[(floor(k * n / g) + 1):floor((k + 1) * n / g)]
      O <- sum(fit$y[idx]); E <- sum(mu[idx]); m <- length(idx)
      stat <- stat + (O - E)^2 / (E * (1 - E / m))
    }
    hl <- list(statistic = stat, df = g - 2, p = pchisq(stat, g - 2, lower.tail = FALSE))
  }
  homogeneity <- NULL
  marginal <- NULL
  if (!is.null(spec$treatment)) {
    arm <- spec$treatment
    others <- setdiff(vapply(mains, function(t) t$variable, ""), arm)
    if (length(others) > 0) {
      one <- function(cvs) {
        nested(refit(update(prep$formula, as.formula(paste(". ~ . +", paste0("`", arm, "`:`", cvs, "`", collapse = " + "))))))
      }
      homogeneity <- list(joint = one(others), byCovariate = lapply(others, function(cv) c(list(term = paste(arm, "by", cv)), one(cv))))
    }
    # standardized arm means and differences (emmeans counterfactual grid, Ge et al. delta method)
    rg <- ref_grid(fit, counterfactuals = arm)
    e <- emmeans(rg, arm)
    s <- summary(e, infer = c(TRUE, FALSE))
    est_col <- if ("prob" %in% names(s)) "prob" else if ("response" %in% names(s)) "response" else names(s)[2]
    lev <- levels(dd[[arm]])
    ref <- match(if (is.null(mains[[which(vapply(mains, function(t) t$variable == arm, TRUE))]]$reference)) lev[1]
                 else mains[[which(vapply(mains, function(t) t$variable == arm, TRUE))]]$reference, lev)
    ct <- summary(contrast(e, method = "trt.vs.ctrl", ref = ref, adjust = "none"), infer = c(TRUE, TRUE))
    # log ratio of standardized means (risk or rate ratio) and log odds ratio by the delta method
    lrr <- summary(contrast(regrid(e, transform = "log"), method = "trt.vs.ctrl", ref = ref, adjust = "none"))
    lor <- if (fam == "binomial") summary(contrast(regrid(e, transform = "logit"), method = "trt.vs.ctrl", ref = ref, adjust = "none")) else NULL
    # the misspecification-robust variance of Ye, Shao, Yi and Zhao (2023), written out in R; it
    # rests on the residuals averaging to zero within each arm, which a canonical link with an
    # intercept and no prior weights guarantees (logit binomial, log Poisson and quasi-Poisson)
    ye_applies <- ((fam == "binomial" && (is.null(link) || link == "logit")) || fam %in% c("poisson", "quasipoisson")) &&
      is.null(spec$weights) && !isFALSE(spec$intercept)
    y <- fit$y
    preds <- sapply(lev, function(l) { nd <- dd; nd[[arm]] <- factor(l, levels = lev); contrasts(nd[[arm]]) <- contrasts(dd[[arm]]); predict(fit, nd, type = "response") })
    pi <- as.numeric(table(dd[[arm]])[lev]) / n
    K <- length(lev)
    V <- matrix(0, K, K)
    for (a in seq_len(K)) {
      ia <- dd[[arm]] == lev[a]
      V[a, a] <- var(y[ia] - preds[ia, a]) / pi[a] + 2 * cov(y[ia], preds[ia, a]) - var(preds[, a])
      for (b in seq_len(K)) if (b != a) {
        ib <- dd[[arm]] == lev[b]
        V[a, b] <- cov(y[ia], preds[ia, b]) + cov(y[ib], preds[ib, a]) - cov(preds[, a], preds[, b])
      }
    }
    V <- V / n
    m <- colMeans(preds)
    marginal <- list(
      means = lapply(seq_len(K), function(a) list(level = lev[a], estimate = s[[est_col]][a], se = s$SE[a],
                                                 lower = s$asymp.LCL[a], upper = s$asymp.UCL[a], robustSe = if (ye_applies) sqrt(V[a, a]) else NA)),
      differences = lapply(seq_len(nrow(ct)), function(i) list(label = as.character(ct$contrast[i]), estimate = ct$estimate[i], se = ct$SE[i],
                                                           p = ct$p.value[i])),
      logRatio = lapply(seq_len(nrow(lrr)), function(i) list(estimate = lrr$estimate[i], se = lrr$SE[i])),
      logOddsRatio = if (is.null(lor)) NA else lapply(seq_len(nrow(lor)), function(i) list(estimate = lor$estimate[i], se = lor$SE[i])),
      robustApplies = ye_applies,
      robustDifferenceSe = if (!ye_applies) NA else lapply(setdiff(seq_len(K), ref), function(a) sqrt(V[a, a] + V[ref, ref] - 2 * V[a, ref])),
      robustLogRatioSe = if (!ye_applies) NA else lapply(setdiff(seq_len(K), ref), function(a) {
        g <- rep(0, K); g[a] <- 1 / m[a]; g[ref] <- -1 / m[ref]; sqrt(drop(t(g) %*% V %*% g)) }))
  }
  vif_rows <- NA
  if (length(attr(terms(fit), "term.labels")) >= 2) {
    v <- suppressWarnings(suppressMessages(car::vif(fit, type = "terms")))
    vif_rows <- if (is.matrix(v)) lapply(seq_len(nrow(v)), function(i) list(term = rownames(v)[i], gvif = v[i, 1], df = v[i, 2], adjusted = v[i, 3]))
                else lapply(seq_along(v), function(i) list(term = names(v)[i], gvif = num(v[i]), df = 1, adjusted = sqrt(num(v[i]))))
  }
  writeLines(toJSON(spec, auto_unbox = TRUE, pretty = TRUE), file.path(root, "models", paste0(name, ".json")))
  out <- list(case = name, source = source, data = paste0("data/", name, ".csv"), model = paste0("models/", name, ".json"),
              rVersion = R.version.string, n = n, rank = fit$rank, excluded = nrow(d) - n,
              coefficients = coefficients, robustSE = robust, fit = fitstats, observations = observations,
              linearity = if (length(linearity) == 0) NA else linearity,
              smooths = if (length(smooths) == 0) NA else smooths,
              hosmerLemeshow = if (is.null(hl)) NA else hl,
              homogeneity = if (is.null(homogeneity)) NA else homogeneity,
              vif = vif_rows, marginal = if (is.null(marginal)) NA else marginal,
              vcov = lapply(seq_len(ncol(vcov(fit))), function(i) num(vcov(fit)[i, ])))
  writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, na = "null", pretty = FALSE),
             file.path(root, "values", paste0(name, ".json")))
  cat("wrote", name, "\n")
}

run_glm_case <- function(name, df, spec, source) {
  path <- write_case_data(df, name)
  glm_reference_values(name, spec, read_case_data(path), source)
}

bw <- MASS::birthwt[, c("low", "age", "lwt", "race", "smoke")]
bw$race <- c("white", "black", "other")[bw$race]
run_glm_case("glm-birthwt-logit", bw,
  list(response = "low", family = "binomial", terms = list(list(variable = "smoke", categorical = TRUE, reference = "0"),
       list(variable = "age"), list(variable = "lwt"), list(variable = "race", reference = "white")), treatment = "smoke"),
  "MASS::birthwt (Hosmer and Lemeshow); glm logit, emmeans counterfactuals")
run_glm_case("glm-birthwt-probit", bw,
  list(response = "low", family = "binomial", link = "probit", terms = list(list(variable = "smoke", categorical = TRUE, reference = "0"),
       list(variable = "age"), list(variable = "lwt"), list(variable = "race", reference = "white")), treatment = "smoke"),
  "MASS::birthwt; glm probit")
run_glm_case("glm-warpbreaks-poisson", warpbreaks,
  list(response = "breaks", family = "poisson", terms = list(list(variable = "wool"), list(variable = "tension", reference = "L")),
       treatment = "tension"),
  "R datasets::warpbreaks; glm Poisson with two categoricals, emmeans counterfactuals")
run_glm_case("glm-warpbreaks-quasipoisson", warpbreaks,
  list(response = "breaks", family = "quasipoisson", terms = list(list(variable = "wool"), list(variable = "tension", reference = "L"))),
  "R datasets::warpbreaks; glm quasi-Poisson")
ins <- MASS::Insurance
ins <- data.frame(District = as.character(ins$District), Group = as.character(ins$Group), Age = as.character(ins$Age),
                  Holders = ins$Holders, logHolders = log(ins$Holders), Claims = ins$Claims)
run_glm_case("glm-insurance-offset", ins,
  list(response = "Claims", family = "poisson", terms = list(list(variable = "District", categorical = TRUE), list(variable = "Group"),
       list(variable = "Age")), offset = "logHolders"),
  "MASS::Insurance; glm Poisson with log(holders) offset")
run_glm_case("glm-quine-negbin", quine,
  list(response = "Days", family = "negative-binomial", terms = list(list(variable = "Eth"), list(variable = "Sex"),
       list(variable = "Age"), list(variable = "Lrn")), treatment = "Eth"),
  "MASS::quine; MASS::glm.nb (theta by maximum likelihood)")
set.seed(31)
nr <- 240
rarm <- rep(c("Placebo", "Active"), each = nr / 2)
rbase <- round(rnorm(nr, 20, 5), 1)
rsite <- sample(c("North", "South", "East"), nr, replace = TRUE)
lp <- -1 + 0.9 * (rarm == "Active") + 0.08 * (rbase - 20) + ifelse(rsite == "East", 0.4, 0)
resp <- ifelse(runif(nr) < plogis(lp), "responder", "non-responder")
resp[c(5, 77)] <- NA
run_glm_case("glm-trial-responder", data.frame(subject = sprintf("R%03d", 1:nr), arm = rarm, base = rbase, site = rsite, response = resp),
  list(response = "response", family = "binomial", event = "responder", terms = list(list(variable = "arm", reference = "Placebo"),
       list(variable = "base"), list(variable = "site")), id = "subject", treatment = "arm"),
  "invented trial data (R set.seed(31)); glm logit with an event level, emmeans counterfactuals")
run_glm_case("glm-trial-cloglog", data.frame(subject = sprintf("R%03d", 1:nr), arm = rarm, base = rbase, site = rsite, response = resp),
  list(response = "response", family = "binomial", link = "cloglog", event = "responder", terms = list(list(variable = "arm", reference = "Placebo"),
       list(variable = "base"), list(variable = "site")), id = "subject"),
  "invented trial data (R set.seed(31)); glm complementary log-log")
wb <- warpbreaks
wb$w <- 1 + (seq_len(nrow(wb)) %% 3)
run_glm_case("glm-warpbreaks-weighted", wb,
  list(response = "breaks", family = "poisson", terms = list(list(variable = "wool"), list(variable = "tension", reference = "L")),
       weights = "w"),
  "R datasets::warpbreaks with invented prior weights; weighted glm Poisson")
ep <- MASS::epil[MASS::epil$period == 4, c("subject", "y", "trt", "base", "age")]
ep$trt <- as.character(ep$trt)
run_glm_case("glm-epil-quasipoisson", ep,
  list(response = "y", family = "quasipoisson", terms = list(list(variable = "trt", reference = "placebo"),
       list(variable = "base"), list(variable = "age")), id = "subject", treatment = "trt"),
  "MASS::epil (Thall and Vail 1990), fourth period; glm quasi-Poisson, anova.glm F tests, emmeans counterfactuals")
run_glm_case("glm-epil-negbin", ep,
  list(response = "y", family = "negative-binomial", terms = list(list(variable = "trt", reference = "placebo"),
       list(variable = "base"), list(variable = "age")), id = "subject", treatment = "trt"),
  "MASS::epil (Thall and Vail 1990), fourth period; MASS::glm.nb, anova.negbin with theta re-estimated")
# a rate ratio of ten: Wald p-values near 1e-200 (summary.glm: 2 * pnorm(-|z|)); invented, seeded
set.seed(12)
np_ <- 80
p_arm <- rep(c("Control", "Active"), each = np_ / 2)
p_x <- round(rnorm(np_), 2)
p_y <- rpois(np_, exp(log(6) + log(10) * (p_arm == "Active") + 0.2 * p_x))
run_glm_case("glm-strong-effect", data.frame(subject = sprintf("P%02d", seq_len(np_)), arm = p_arm, x = p_x, y = p_y),
  list(response = "y", family = "poisson", terms = list(list(variable = "arm", reference = "Control"), list(variable = "x")),
       id = "subject", treatment = "arm"),
  "invented data (R set.seed(12)); glm Poisson with Wald p-values near 1e-200")
