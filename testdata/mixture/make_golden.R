#!/usr/bin/env Rscript
# Golden values for cluster/mixture (Dirichlet-multinomial mixtures), from the reference
# implementations in Debian's packages:
#   r-bioc-dirichletmultinomial (DirichletMultinomial, the implementation of Holmes, Harris &
#     Quince 2012, PLoS ONE 7:e30126) and r-cran-dirmult (dirmult, maximum-likelihood fit of one
#     Dirichlet-multinomial, Tvedebrink 2010).
# Data: the twin-gut counts that DirichletMultinomial ships (extdata/Twins.csv, 278 samples ×
# 130 taxa, Turnbaugh et al. 2009), reduced to the 12 taxa with the most counts and the rest
# summed into "other", written to twins13.csv; and the allele counts of locus D8S1179 that
# dirmult ships (data us).
# Run from the repository root:  Rscript testdata/mixture/make_golden.R
# Writes testdata/mixture/twins13.csv and testdata/mixture/golden.json.
suppressPackageStartupMessages({library(DirichletMultinomial); library(dirmult)})
out <- "testdata/mixture"
x <- read.csv(system.file(package = "DirichletMultinomial", "extdata", "Twins.csv"), row.names = 1)
count <- t(as.matrix(x))
top <- order(colSums(count), decreasing = TRUE)[1:12]
red <- cbind(count[, top], other = rowSums(count[, -top]))
write.csv(red, file.path(out, "twins13.csv"), row.names = TRUE)
num <- function(v) paste0("[", paste(sprintf("%.17g", v), collapse = ", "), "]")
parts <- c()
for (k in 1:3) {
  set.seed(1)
  fit <- dmn(red, k, verbose = FALSE)
  g <- fit@goodnessOfFit
  a <- fitted(fit, scale = FALSE) # taxa × k
  alpha <- paste(apply(a, 2, num), collapse = ", ")
  parts <- c(parts, sprintf('{"k": %d, "nle": %.17g, "logdet": %.17g, "laplace": %.17g, "bic": %.17g, "aic": %.17g, "weights": %s, "alpha": [%s]}',
    k, g[["NLE"]], g[["LogDet"]], g[["Laplace"]], g[["BIC"]], g[["AIC"]], num(fit@mixture$Weight), alpha))
}
ml <- dirmult(red, epsilon = 1e-10, trace = FALSE)
load(system.file(package = "dirmult", "data", "us.RData"))
ml2 <- dirmult(us$D8S1179, epsilon = 1e-10, trace = FALSE)
cat(sprintf('{"source": "R %s, DirichletMultinomial %s, dirmult %s", "dmn": [%s],\n "dirmult_twins": {"alpha": %s, "loglik": %.17g},\n "dirmult_d8s1179": {"counts": %s, "rows": %d, "alpha": %s, "loglik": %.17g}}\n',
  getRversion(), packageVersion("DirichletMultinomial"), packageVersion("dirmult"), paste(parts, collapse = ",\n "),
  num(ml$gamma), ml$loglik, num(as.vector(t(us$D8S1179))), nrow(us$D8S1179), num(ml2$gamma), ml2$loglik),
  file = file.path(out, "golden.json"))
