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
# gls is run with tight tolerances (tolerance 1e-12, msTol 1e-14, msMaxIter 2000). Where gls still
# stops short of the maximum (its log-likelihood below the maximum by up to 1e-7, enough to move
# estimates by 1e-5), the values are settled by direct computation: the same (restricted)
# log-likelihood written out here (checked equal to nlme's logLik at nlme's estimate), maximized
# from nlme's estimate by Newton steps on numDeriv's Richardson-extrapolated gradient and Hessian.
# The direct computation also gives: normalized residuals as the inverse lower Cholesky factor of
# each subject's covariance applied to its residuals (nlme's own agree for every structure but
# compound symmetry, whose corStruct uses another square root); ML standard errors from
# (X'V^-1 X)^-1 (nlme multiplies them by sqrt(N/(N - p))); and exact Satterthwaite df,
# 2 v^2 / (g' W g) with W the inverse observed information and g the gradient of v = l'C l, for
# emmeans' own linear functions (emmeans' gls df use nlme's apVar, a coarser finite-difference
# Hessian; its values are kept as emmeansDf).

suppressPackageStartupMessages({
  library(jsonlite)
  library(nlme)
  library(emmeans)
  library(numDeriv)
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


# ---- direct computation -----------------------------------------------------------------------
# the (restricted) log-likelihood as a function of the visits' covariance S, subjects grouped by
# their set of observed visits
make_direct <- function(X, y, subject, pos, method) {
  N <- nrow(X); p <- ncol(X)
  rows <- split(seq_len(N), subject)
  rows <- lapply(rows, function(r) r[order(pos[r])])
  key <- vapply(rows, function(r) paste(pos[r], collapse = ","), "")
  groups <- lapply(split(rows, key), function(g) list(pos = pos[g[[1]]], idx = do.call(rbind, g)))
  fit_at <- function(S) {
    A <- matrix(0, p, p); b <- numeric(p); logdet <- 0
    for (g in groups) {
      V <- S[g$pos, g$pos, drop = FALSE]
      U <- chol(V)
      Vi <- chol2inv(U)
      logdet <- logdet + nrow(g$idx) * 2 * sum(log(diag(U)))
      m <- length(g$pos)
      for (a in seq_len(m)) for (c in seq_len(m)) {
        Xa <- X[g$idx[, a], , drop = FALSE]
        A <- A + Vi[a, c] * crossprod(Xa, X[g$idx[, c], , drop = FALSE])
        b <- b + Vi[a, c] * crossprod(Xa, y[g$idx[, c]])
      }
    }
    C <- solve(A)
    beta <- drop(C %*% b)
    r <- drop(y - X %*% beta)
    quad <- 0
    for (g in groups) {
      Vi <- chol2inv(chol(S[g$pos, g$pos, drop = FALSE]))
      R <- matrix(r[g$idx], nrow = nrow(g$idx))
      quad <- quad + sum((R %*% Vi) * R)
    }
    ll <- if (method == "ml") -0.5 * (N * log(2 * pi) + logdet + quad) else
      -0.5 * ((N - p) * log(2 * pi) + logdet + as.numeric(determinant(A)$modulus) + quad)
    list(logLik = ll, beta = beta, C = C, r = r)
  }
  normalized <- function(S, r) {
    out <- numeric(N)
    for (rr in rows) out[rr] <- backsolve(chol(S[pos[rr], pos[rr], drop = FALSE]), r[rr], transpose = TRUE)
    out
  }
  list(fit_at = fit_at, normalized = normalized)
}

# Σ(θ) per structure (any parameterization serves: the maximum does not depend on it)
sigma_map <- function(structure, T) {
  het <- grepl("heterogeneous", structure)
  base <- sub("-heterogeneous", "", structure)
  nv <- if (het) T else 1
  sds <- function(th) rep_len(exp(th[seq_len(nv)]), T)
  lag <- abs(outer(seq_len(T), seq_len(T), "-"))
  switch(base,
    "unstructured" = list(
      to = function(S) { L <- t(chol(S)); diag(L) <- log(diag(L)); L[lower.tri(L, diag = TRUE)] },
      from = function(th) { L <- matrix(0, T, T); L[lower.tri(L, diag = TRUE)] <- th; diag(L) <- exp(diag(L)); L %*% t(L) }),
    "compound-symmetry" = list(
      to = function(S) { sd <- sqrt(diag(S)); R <- S / outer(sd, sd); c(log(if (het) sd else mean(sd)), atanh(mean(R[upper.tri(R)]))) },
      from = function(th) { sd <- sds(th); R <- matrix(tanh(th[nv + 1]), T, T); diag(R) <- 1; R * outer(sd, sd) }),
    "ar1" = list(
      to = function(S) { sd <- sqrt(diag(S)); c(log(if (het) sd else mean(sd)), atanh(S[1, 2] / (sd[1] * sd[2]))) },
      from = function(th) { sd <- sds(th); tanh(th[nv + 1])^lag * outer(sd, sd) }),
    "toeplitz" = list(
      to = function(S) { sd <- sqrt(diag(S)); R <- S / outer(sd, sd); c(log(if (het) sd else mean(sd)), R[1, -1]) },
      from = function(th) { sd <- sds(th); R <- matrix(c(1, th[nv + seq_len(T - 1)])[lag + 1], T, T); R * outer(sd, sd) })
  )
}

polish <- function(dc, map, S0) {
  f <- function(th) {
    S <- map$from(th)
    if (inherits(try(chol(S), silent = TRUE), "try-error")) return(-1e300)
    dc$fit_at(S)$logLik
  }
  th <- map$to(S0)
  start <- f(th)
  for (it in 1:8) {
    g <- grad(f, th)
    H <- hessian(f, th)
    step <- -solve(H, g)
    th_new <- th + step
    if (f(th_new) < f(th) - 1e-12) break
    th <- th_new
    if (max(abs(step)) < 1e-11) break
  }
  list(theta = th, f = f, gain = f(th) - start)
}

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
  vc <- unclass(getVarCov(fit, individual = full))[seq_along(ord), seq_along(ord)]
  X <- model.matrix(formula, d)
  y <- d[[spec$response]]
  dc <- make_direct(X, y, as.character(d[[rep$subject]]), d$.POS, rep$method)
  at_nlme <- dc$fit_at(vc)
  stopifnot(abs(at_nlme$logLik - num(logLik(fit))) < 1e-8 * abs(at_nlme$logLik))
  map <- sigma_map(rep$covariance, length(ord))
  pol <- polish(dc, map, vc)
  S <- map$from(pol$theta)
  best <- dc$fit_at(S)
  if (rep$covariance != "compound-symmetry" && rep$covariance != "compound-symmetry-heterogeneous") {
    nlme_norm <- num(residuals(fit, type = "normalized"))
    stopifnot(max(abs(nlme_norm - dc$normalized(vc, at_nlme$r))) < 1e-8)
  }
  K <- attr(logLik(fit), "df") - ncol(X)
  out <- list(
    source = sprintf("R %s, nlme %s, emmeans %s, numDeriv %s: gls(method = \"%s\"), settled by direct computation (log-likelihood gain over gls %.3g)",
      getRversion(), packageVersion("nlme"), packageVersion("emmeans"), packageVersion("numDeriv"), method, pol$gain),
    nlmeLogLik = num(logLik(fit)),
    coefficients = lapply(seq_along(best$beta), function(j) list(name = colnames(X)[j], estimate = best$beta[j], se = sqrt(best$C[j, j]))),
    logLik = best$logLik,
    aic = -2 * best$logLik + 2 * attr(logLik(fit), "df"),
    parameterCount = attr(logLik(fit), "df"),
    covariance = lapply(seq_len(nrow(S)), function(i) num(S[i, ])),
    fitted = num(X %*% best$beta),
    residual = best$r,
    normalizedResidual = dc$normalized(S, best$r)
  )
  if (emm && !is.null(spec$treatment)) {
    e <- emmeans(fit, as.formula(paste("~", spec$treatment, "|", rep$visit)), data = d, mode = "satterthwaite")
    ce <- contrast(e, "trt.vs.ctrl")
    # exact Satterthwaite df of emmeans' own linear functions at the settled estimate
    W <- solve(-hessian(pol$f, pol$theta))
    satt <- function(L) {
      vfun <- function(th) { C <- dc$fit_at(map$from(th))$C; rowSums((L %*% C) * L) }
      G <- jacobian(vfun, pol$theta)
      v <- vfun(pol$theta)
      2 * v^2 / rowSums((G %*% W) * G)
    }
    one <- function(em, extra) {
      s <- as.data.frame(summary(em))
      L <- em@linfct
      est <- drop(L %*% best$beta)
      se <- sqrt(rowSums((L %*% best$C) * L))
      df <- satt(L)
      lapply(seq_len(nrow(s)), function(i) c(extra(s, i), list(visit = as.character(s[[rep$visit]][i]),
        estimate = est[i], se = se[i], df = df[i], emmeansDf = s$df[i])))
    }
    out$means <- one(e, function(s, i) list(level = as.character(s[[spec$treatment]][i])))
    out$contrasts <- one(ce, function(s, i) list(label = as.character(s$contrast[i])))
    out$pairwise <- one(contrast(e, "revpairwise"), function(s, i) list(label = as.character(s$contrast[i])))
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
