// Package cohort reads a study's long per-window tables into participants, accounts for every
// window and participant that comes in, and groups participants by their movement signatures.
//
// # Conventions
//
// Input files are only ever read. Every error about an input cell is an *InputError naming the
// file, the 1-based line and byte column, and the field, and unwraps to one of the sentinels below.
// Anything the reader does on its own (sorting windows, merging a participant split across files,
// dropping or imputing missing cells, excluding short participants, dropping constant features)
// is recorded in Quality, so that the workbook can show it. Every random step is seeded.
//
// # References
//
//   - Ward JH (1963). Hierarchical grouping to optimize an objective function. JASA 58:236–244.
//   - Rao CR (1995). A review of canonical coordinates and an alternative to correspondence
//     analysis using Hellinger distance. Qüestiió 19:23–63 (Hellinger transform of profiles).
//   - Aitchison J (1986). The Statistical Analysis of Compositional Data. Chapman & Hall.
//   - Tibshirani R, Walther G, Hastie T (2001). Estimating the number of clusters in a data set via
//     the gap statistic. J. R. Stat. Soc. B 63:411–423.
//   - Lange T, Roth V, Braun ML, Buhmann JM (2004). Stability-based validation of clustering
//     solutions. Neural Comput. 16:1299–1323 (bootstrap stability of a partition).
//   - Kruskal WH, Wallis WA (1952); Benjamini Y, Hochberg Y (1995): see package groupstat.
package cohort
