package io.actindex.query;

import io.actindex.core.BadInputException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * How well a score separates in-distribution inputs from out-of-distribution ones (higher score =
 * more out). Computed from the two score samples alone:
 *
 * <ul>
 *   <li>{@code auroc}: the Mann-Whitney U statistic of the out scores over the in scores divided by
 *       {@code n_in * n_out} (Mann &amp; Whitney 1947; Hanley &amp; McNeil 1982), ties counting one half:
 *       the probability that a random out input scores above a random in input;
 *   <li>{@code fprAt95Tpr}: the share of out inputs accepted as in when the threshold accepts 95% of
 *       in inputs (the smallest in score whose share of in scores at or below it reaches 0.95);
 *   <li>{@code auprIn} / {@code auprOut}: average precision with the in inputs (lower score = more
 *       in) or the out inputs as the positive class, {@code sum_n (R_n - R_{n-1}) P_n} over the
 *       distinct thresholds, no interpolation (scikit-learn's {@code average_precision_score});
 *   <li>{@code roc}: the ROC curve, one point per distinct threshold from the highest down.
 * </ul>
 */
public record RocMetrics(int nIn, int nOut, double auroc, double fprAt95Tpr, double auprIn, double auprOut, List<Point> roc) {

  /**
   * One ROC point: flag as out every input scoring {@code >= threshold}; {@code falseAlarmRate}
   * is the share of in inputs flagged, {@code detectionRate} the share of out inputs flagged.
   */
  public record Point(double threshold, double falseAlarmRate, double detectionRate) {}

  public static RocMetrics of(double[] in, double[] out) {
    if (in.length == 0 || out.length == 0)
      throw new BadInputException("ROC metrics need in- and out-of-distribution scores; got " + in.length + " in and " + out.length + " out");
    for (double[] a : new double[][] {in, out})
      for (double v : a) if (Double.isNaN(v)) throw new IllegalArgumentException("NaN score");
    return new RocMetrics(in.length, out.length, auroc(in, out), fprAtTpr(in, out, 0.95),
        averagePrecision(negate(in), negate(out)), averagePrecision(out, in), curve(in, out));
  }

  /** U / (n_in n_out) by midranks of the pooled sample: O((n_in + n_out) log(n_in + n_out)). */
  public static double auroc(double[] in, double[] out) {
    int n = in.length + out.length;
    double[] all = new double[n];
    boolean[] isOut = new boolean[n];
    Integer[] order = new Integer[n];
    for (int i = 0; i < n; i++) {
      all[i] = i < in.length ? in[i] : out[i - in.length];
      isOut[i] = i >= in.length;
      order[i] = i;
    }
    Arrays.sort(order, (a, b) -> Double.compare(all[a], all[b]));
    double rankSumOut = 0;
    for (int i = 0; i < n; ) {
      int j = i;
      while (j + 1 < n && all[order[j + 1]] == all[order[i]]) j++;
      double midrank = (i + j) / 2.0 + 1; // ranks from 1
      for (int t = i; t <= j; t++) if (isOut[order[t]]) rankSumOut += midrank;
      i = j + 1;
    }
    double u = rankSumOut - out.length * (out.length + 1) / 2.0;
    return u / ((double) in.length * out.length);
  }

  /** Share of out scores {@code <=} the threshold that accepts at least {@code tpr} of the in scores. */
  public static double fprAtTpr(double[] in, double[] out, double tpr) {
    double[] s = in.clone();
    Arrays.sort(s);
    int need = (int) Math.ceil(tpr * s.length - 1e-9);
    double threshold = s[Math.max(need, 1) - 1];
    int accepted = 0;
    for (double v : out) if (v <= threshold) accepted++;
    return accepted / (double) out.length;
  }

  /** Average precision of {@code pos} against {@code neg} (higher score = more positive). */
  public static double averagePrecision(double[] pos, double[] neg) {
    double[] p = pos.clone(), q = neg.clone();
    Arrays.sort(p);
    Arrays.sort(q);
    int i = p.length - 1, j = q.length - 1; // walk thresholds from the top
    int tp = 0, fp = 0;
    double ap = 0, lastRecall = 0;
    while (i >= 0 || j >= 0) {
      double t = Math.max(i >= 0 ? p[i] : Double.NEGATIVE_INFINITY, j >= 0 ? q[j] : Double.NEGATIVE_INFINITY);
      while (i >= 0 && p[i] == t) {
        tp++;
        i--;
      }
      while (j >= 0 && q[j] == t) {
        fp++;
        j--;
      }
      double recall = tp / (double) p.length;
      ap += (recall - lastRecall) * (tp / (double) (tp + fp));
      lastRecall = recall;
    }
    return ap;
  }

  private static List<Point> curve(double[] in, double[] out) {
    double[] a = in.clone(), b = out.clone();
    Arrays.sort(a);
    Arrays.sort(b);
    List<Point> pts = new ArrayList<>();
    pts.add(new Point(Double.POSITIVE_INFINITY, 0, 0));
    int i = a.length - 1, j = b.length - 1;
    while (i >= 0 || j >= 0) {
      double t = Math.max(i >= 0 ? a[i] : Double.NEGATIVE_INFINITY, j >= 0 ? b[j] : Double.NEGATIVE_INFINITY);
      while (i >= 0 && a[i] == t) i--;
      while (j >= 0 && b[j] == t) j--;
      pts.add(new Point(t, (a.length - 1 - i) / (double) a.length, (b.length - 1 - j) / (double) b.length));
    }
    return List.copyOf(pts);
  }

  private static double[] negate(double[] v) {
    double[] r = new double[v.length];
    for (int i = 0; i < v.length; i++) r[i] = -v[i];
    return r;
  }
}
