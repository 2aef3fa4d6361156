// Package cluster groups the rows of a matrix and measures how well they are grouped: k-means,
// agglomerative hierarchical clustering, k-medoids, PCA, distances between compositions, validity
// indices, whether two groups are two modes (Valley), the optimal matching of two labelings and
// the rotation that best turns one set of vectors onto another. It knows nothing of participants
// or files.
//
// # Conventions
//
// Inputs are never modified. Rows are observations and columns are variables. Labels are
// 0-based group indices. Every random step takes a seed and derives one stream per restart or
// worker from it, so a seed fixes the result exactly whatever the number of workers; results are
// reduced in a fixed order and ties go to the lower index. Every exported function checks its
// arguments and returns an error wrapping one of the sentinels below; none panics on input.
// Condensed distance matrices hold the upper triangle row by row, as scipy.spatial.distance.pdist
// does, so that entry (i, j), i < j, sits at n·i − i(i+1)/2 + j − i − 1.
//
// # References
//
//   - Arthur D, Vassilvitskii S (2007). k-means++: the advantages of careful seeding. Proc. SODA.
//   - Hamerly G (2010). Making k-means even faster. Proc. SIAM SDM.
//   - Sculley D (2010). Web-scale k-means clustering. Proc. WWW.
//   - Murtagh F (1983). A survey of recent advances in hierarchical clustering algorithms. Comput. J. 26.
//   - Müllner D (2011). Modern hierarchical, agglomerative clustering algorithms. arXiv:1109.2378.
//   - Kaufman L, Rousseeuw PJ (1990). Finding Groups in Data. Wiley. (PAM: BUILD and SWAP)
//   - Schubert E, Rousseeuw PJ (2019). Faster k-medoids clustering. Proc. SISAP. (FastPAM1)
//   - Aitchison J (1986). The Statistical Analysis of Compositional Data. Chapman & Hall.
//   - Martín-Fernández JA, Barceló-Vidal C, Pawlowsky-Glahn V (2003). Dealing with zeros and missing
//     values in compositional data sets using nonparametric imputation. Math. Geol. 35.
//   - Endres DM, Schindelin JE (2003). A new metric for probability distributions. IEEE Trans. Inf. Theory 49.
//   - Rousseeuw PJ (1987). Silhouettes. J. Comput. Appl. Math. 20.
//   - Caliński T, Harabasz J (1974). A dendrite method for cluster analysis. Commun. Stat. 3.
//   - Davies DL, Bouldin DW (1979). A cluster separation measure. IEEE TPAMI 1.
//   - Hubert L, Arabie P (1985). Comparing partitions. J. Classif. 2.
//   - Vinh NX, Epps J, Bailey J (2010). Information theoretic measures for clusterings comparison. JMLR 11.
//   - Hennig C (2010). Methods for merging Gaussian mixture components. Adv. Data Anal. Classif. 4.
//   - Silverman BW (1986). Density Estimation for Statistics and Data Analysis. Chapman & Hall.
//   - Kabsch W (1976). A solution for the best rotation to relate two sets of vectors. Acta Cryst. A32;
//     Umeyama S (1991). Least-squares estimation of transformation parameters between two point
//     patterns. IEEE TPAMI 13.
//   - Kuhn HW (1955). The Hungarian method for the assignment problem. Nav. Res. Logist. Q. 2;
//     Munkres J (1957). Algorithms for the assignment and transportation problems. J. SIAM 5.
package cluster
