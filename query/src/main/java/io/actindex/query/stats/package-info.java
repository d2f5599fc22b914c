/**
 * Two-sample statistics behind {@code actindex compare}: kernel MMD^2 (Gretton et al., JMLR 2012)
 * with permutation tests, Wasserstein-2 with Hamming ground cost (exact assignment, or Sinkhorn),
 * the Frechet distance between Gaussian fits (Dowson &amp; Landau 1982) and per-neuron firing-rate
 * tests with the Benjamini-Hochberg correction; and the 95% bound of a rate never seen in n
 * examples behind {@code census}'s dead and always-on units. Plain arrays in, records out; no file I/O.
 */
package io.actindex.query.stats;
