package io.actindex.query.stats;

/**
 * A statistic, its permutation p-value ({@link Permutations#pValue}) and the mean and standard
 * deviation of its permutation null distribution.
 */
public record PermutationTest(double statistic, double pValue, int permutations, double nullMean, double nullSd) {

  static PermutationTest of(double observed, double[] nulls) {
    double mean = 0;
    for (double t : nulls) mean += t;
    mean /= nulls.length;
    double var = 0;
    for (double t : nulls) var += (t - mean) * (t - mean);
    double sd = nulls.length > 1 ? Math.sqrt(var / (nulls.length - 1)) : 0;
    return new PermutationTest(observed, Permutations.pValue(observed, nulls), nulls.length, mean, sd);
  }
}
