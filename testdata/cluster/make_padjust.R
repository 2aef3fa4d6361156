# Benjamini-Hochberg q-values from R's p.adjust(method = "BH") (r-base-core, Debian), for
# cluster/groupstat's TestBenjaminiHochbergGolden. Run from the repository root:
#   Rscript testdata/cluster/make_padjust.R > testdata/cluster/padjust.json
# Sets: the fifteen p-values of Benjamini & Hochberg (1995, section 4), and 40 invented
# p-values with ties and ones (set.seed(27)), in the order given (not sorted).
set.seed(27)
bh15 <- c(0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.000)
ties <- round(runif(40)^3, 3)
ties[c(5, 17)] <- 1
ties[c(8, 9, 30)] <- ties[2]
num <- function(x) paste(sprintf("%.17g", x), collapse = ", ")
cat("{\n")
cat(sprintf(" \"r_version\": \"%s\",\n", R.version.string))
cat(sprintf(" \"cases\": [\n  {\"name\": \"Benjamini and Hochberg 1995, section 4\", \"p\": [%s], \"q\": [%s]},\n", num(bh15), num(p.adjust(bh15, "BH"))))
cat(sprintf("  {\"name\": \"invented, with ties and ones\", \"p\": [%s], \"q\": [%s]}\n ]\n}\n", num(ties), num(p.adjust(ties, "BH"))))
