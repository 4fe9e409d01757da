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
    adjusted <- list(weighting = means_weighting, means = model_based$means, contrasts = model_based$contrasts,
                     hc3Means = hc3$means, hc3Contrasts = hc3$contrasts)
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

  spec$reset_skip <- NULL
  model_path <- file.path(root, "models", paste0(name, ".json"))
  writeLines(toJSON(spec, auto_unbox = TRUE, pretty = TRUE), model_path)
  out <- list(case = name, source = source, data = paste0("data/", name, ".csv"), model = paste0("models/", name, ".json"),
              meansWeighting = means_weighting, rVersion = R.version.string,
              n = n, rank = fit$rank, dfResidual = fit$df.residual, excluded = nrow(d) - n,
              coefficients = coefficients, robustSE = robust, fit = fitstats, observations = observations,
              tests = tests, vif = if (is.null(vif_rows)) NA else vif_rows,
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
