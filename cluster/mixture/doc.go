// Package mixture fits finite mixture models to the rows of a table by expectation–maximization,
// and gives the information criteria that choose their number of components: the
// Dirichlet-multinomial mixture of counts (one block of columns, or several, as the rows of a
// Markov chain's transition counts are) and the Gaussian mixture with one covariance shared by
// every component. One component is a model like any other, so "no groups" is an answer.
//
// # Conventions
//
// Inputs are never modified. Rows are observations. Every fit runs from several starts, each
// seeded from the options' Seed and its index, and keeps the start with the highest objective
// (ties to the lower start), so a seed fixes the result whatever the number of workers. The
// information criteria are on the scale of −2 × log-likelihood, smaller is better: BIC = −2 log L
// + p ln n, AIC = −2 log L + 2p, ICL = BIC + 2 × the entropy of the posterior memberships.
// Every exported function checks its arguments and returns an error wrapping one of the
// sentinels of package cluster; none panics on input.
//
// # References
//
//   - Dempster AP, Laird NM, Rubin DB (1977). Maximum likelihood from incomplete data via the EM
//     algorithm. J. R. Stat. Soc. B 39:1–38.
//   - Holmes I, Harris K, Quince C (2012). Dirichlet multinomial mixtures: generative models for
//     microbial metagenomics. PLoS ONE 7:e30126. (The mixture, its Gamma(η, ν) prior on each α
//     with η = ν = 0.1, and its Laplace approximation to the evidence.)
//   - Minka TP (2000, revised 2012). Estimating a Dirichlet distribution. Technical report,
//     Microsoft Research. (The fixed-point update of a Pólya distribution's α, §4.)
//   - Cadez I, Heckerman D, Meek C, Smyth P, White S (2003). Model-based clustering and
//     visualization of navigation patterns on a web site. Data Min. Knowl. Disc. 7:399–424.
//     (Mixtures of Markov chains on transition counts.)
//   - Fraley C, Raftery AE (2002). Model-based clustering, discriminant analysis, and density
//     estimation. J. Am. Stat. Assoc. 97:611–631. (Gaussian mixtures with a shared covariance,
//     their model EEE, and the choice of the number of components by BIC.)
//   - Schwarz G (1978). Estimating the dimension of a model. Ann. Stat. 6:461–464.
//   - Biernacki C, Celeux G, Govaert G (2000). Assessing a mixture model for clustering with the
//     integrated completed likelihood. IEEE TPAMI 22:719–725.
package mixture
