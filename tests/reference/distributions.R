# Reference values for the distribution tails behind every p-value, computed with R as an
# independent oracle: pt, pf, pchisq and pnorm with lower.tail = FALSE over the whole double
# range (p from about 0.5 down to 1e-300).
#
# Run from the repository root:  Rscript tests/reference/distributions.R
# then:                          python3 tests/reference/distributions-mpmath.py
# The second script recomputes each value at 50 significant digits with mpmath and records it
# beside R's, so the tests can tell an error of R's (its t tail uses a normal approximation
# beyond 4e5 degrees of freedom, for example) from one of ours.

suppressPackageStartupMessages(library(jsonlite))
root <- "tests/reference"
dir.create(file.path(root, "tails"), showWarnings = FALSE)
keep <- function(p) is.finite(p) && p >= 1e-300

t_cases <- list()
for (df in c(1, 2.5, 5, 30, 100, 1000, 1e5, 1e6)) {
  for (t in c(0.1, 1, 2, 2.3646, 5, 10, 20, 40, 100, 1e3, 1e10, 1e100, 1e200)) {
    p <- pt(t, df, lower.tail = FALSE)
    if (keep(p)) t_cases[[length(t_cases) + 1]] <- list(t = t, df = df, r = p)
  }
}
f_cases <- list()
for (d1 in c(1, 2, 3, 10)) for (d2 in c(1, 5, 40, 500, 1e4)) {
  for (f in c(0.5, 1.5, 5, 20, 200, 1e3, 1e5, 1e10, 1e100)) {
    p <- pf(f, d1, d2, lower.tail = FALSE)
    if (keep(p)) f_cases[[length(f_cases) + 1]] <- list(f = f, df1 = d1, df2 = d2, r = p)
  }
}
chisq_cases <- list()
for (k in c(1, 2, 4, 10, 100)) for (x in c(0.5, 3, 10, 50, 100, 300, 1000, 1300)) {
  p <- pchisq(x, k, lower.tail = FALSE)
  if (keep(p)) chisq_cases[[length(chisq_cases) + 1]] <- list(x = x, df = k, r = p)
}
normal_cases <- list()
for (z in c(-2, 0.5, 1, 3, 5, 8.3, 10, 20, 30, 37)) {
  normal_cases[[length(normal_cases) + 1]] <- list(z = z, r = pnorm(z, lower.tail = FALSE))
}

out <- list(
  source = paste("R", getRversion(), "stats::pt, pf, pchisq, pnorm with lower.tail = FALSE"),
  t = t_cases, f = f_cases, chisq = chisq_cases, normal = normal_cases)
writeLines(toJSON(out, auto_unbox = TRUE, digits = NA, pretty = FALSE),
           file.path(root, "tails", "distribution-tails.json"))
