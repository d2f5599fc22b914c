package io.actindex.query.stats;

import io.actindex.core.BadParameterException;
import org.ejml.data.Complex_F64;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.ejml.dense.row.factory.DecompositionFactory_DDRM;
import org.ejml.interfaces.decomposition.EigenDecomposition_F64;

/**
 * The Frechet (Wasserstein-2) distance between Gaussian fits of two float samples (Dowson &amp;
 * Landau, "The Frechet distance between multivariate normal distributions", J. Multivariate
 * Anal. 12, 1982):
 *
 * <pre>
 * FD^2 = |m1 - m2|^2 + tr(S1) + tr(S2) - 2 tr( (S1^1/2 S2 S1^1/2)^1/2 )
 * </pre>
 *
 * reported as the squared distance (the quantity usually tabulated). Means and covariances are
 * the sample ones with the {@code n - 1} denominator ({@code np.cov}'s default). The square roots
 * come from symmetric eigen-decompositions (EJML), negative eigenvalues from rounding clamped to 0;
 * {@code S1^1/2 S2 S1^1/2} is symmetric positive semi-definite with the same trace of the square
 * root as {@code sqrtm(S1 S2)}. A result that rounding takes below 0 is reported as 0.
 */
public final class Frechet {
  private Frechet() {}

  /** Needs at least 2 rows per sample and the same columns. */
  public static double squared(FloatSample a, FloatSample b) {
    int d = a.cols();
    if (b.cols() != d) throw new BadParameterException("b", " has " + b.cols() + " columns, sample A " + d);
    double[] m1 = mean(a), m2 = mean(b);
    DMatrixRMaj s1 = covariance(a, m1), s2 = covariance(b, m2);
    double meanTerm = 0;
    for (int j = 0; j < d; j++) meanTerm += (m1[j] - m2[j]) * (m1[j] - m2[j]);
    DMatrixRMaj r1 = sqrtPsd(s1);
    DMatrixRMaj t = new DMatrixRMaj(d, d), mid = new DMatrixRMaj(d, d);
    CommonOps_DDRM.mult(r1, s2, t);
    CommonOps_DDRM.mult(t, r1, mid);
    symmetrize(mid);
    double traceSqrt = 0;
    for (double ev : eigenvalues(mid)) traceSqrt += Math.sqrt(Math.max(0, ev));
    // a squared distance: rounding below 0 (two alike samples with singular covariances) is 0
    return Math.max(0, meanTerm + CommonOps_DDRM.trace(s1) + CommonOps_DDRM.trace(s2) - 2 * traceSqrt);
  }

  static double[] mean(FloatSample s) {
    double[] m = new double[s.cols()];
    double[] v = s.values();
    for (int i = 0; i < s.rows(); i++) for (int j = 0; j < m.length; j++) m[j] += v[i * m.length + j];
    for (int j = 0; j < m.length; j++) m[j] /= s.rows();
    return m;
  }

  static DMatrixRMaj covariance(FloatSample s, double[] mean) {
    int n = s.rows(), d = s.cols();
    DMatrixRMaj centered = new DMatrixRMaj(n, d);
    double[] v = s.values(), c = centered.data;
    for (int i = 0; i < n; i++) for (int j = 0; j < d; j++) c[i * d + j] = v[i * d + j] - mean[j];
    DMatrixRMaj cov = new DMatrixRMaj(d, d);
    CommonOps_DDRM.multTransA(centered, centered, cov);
    CommonOps_DDRM.scale(1.0 / (n - 1), cov);
    return cov;
  }

  /** V diag(sqrt(max(lambda, 0))) V^T of a symmetric positive semi-definite matrix. */
  static DMatrixRMaj sqrtPsd(DMatrixRMaj s) {
    int d = s.numRows;
    EigenDecomposition_F64<DMatrixRMaj> eig = DecompositionFactory_DDRM.eig(d, true, true);
    if (!eig.decompose(s.copy())) throw new IllegalStateException("eigen-decomposition failed");
    DMatrixRMaj out = new DMatrixRMaj(d, d);
    for (int k = 0; k < eig.getNumberOfEigenvalues(); k++) {
      double root = Math.sqrt(Math.max(0, eig.getEigenvalue(k).real));
      if (root == 0) continue;
      DMatrixRMaj vec = eig.getEigenVector(k);
      for (int i = 0; i < d; i++) {
        double vi = vec.get(i) * root;
        for (int j = 0; j < d; j++) out.data[i * d + j] += vi * vec.get(j);
      }
    }
    return out;
  }

  private static double[] eigenvalues(DMatrixRMaj s) {
    EigenDecomposition_F64<DMatrixRMaj> eig = DecompositionFactory_DDRM.eig(s.numRows, false, true);
    if (!eig.decompose(s.copy())) throw new IllegalStateException("eigen-decomposition failed");
    double[] out = new double[eig.getNumberOfEigenvalues()];
    for (int k = 0; k < out.length; k++) {
      Complex_F64 ev = eig.getEigenvalue(k);
      out[k] = ev.real;
    }
    return out;
  }

  private static void symmetrize(DMatrixRMaj m) {
    int d = m.numRows;
    for (int i = 0; i < d; i++)
      for (int j = i + 1; j < d; j++) {
        double v = (m.get(i, j) + m.get(j, i)) / 2;
        m.set(i, j, v);
        m.set(j, i, v);
      }
  }
}
