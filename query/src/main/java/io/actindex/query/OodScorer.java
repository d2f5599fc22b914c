package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.Hits;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.index.store.IndexReader;
import java.util.List;

/**
 * The out-of-distribution score of codes against the live examples of an index: the Hamming
 * distance to the k-th nearest example, or the mean of the k nearest (Sun, Ming, Zhu &amp; Li,
 * "Out-of-Distribution Detection with Deep Nearest Neighbors", ICML 2022, on codes), counted on
 * chosen layers. Exact: the index's k-NN search. Higher = further from the training data.
 */
public final class OodScorer {
  /**
   * One code's score: {@code value} (the chosen statistic), the k-th distance, the mean of the k
   * nearest, whether the code's own region holds a training example (distance 0), and the nearest
   * examples found (ids and distances, ascending).
   */
  public record Score(double value, int kth, double mean, boolean ownRegion, Hits nearest) {}

  private final IndexReader reader;
  private final int k;
  private final Statistic statistic;
  private final long[] mask;

  /** {@code layers} null or empty = all layers; k larger than the live examples is refused. */
  public OodScorer(IndexReader reader, int k, Statistic statistic, List<String> layers) {
    this.reader = reader;
    this.k = k;
    this.statistic = statistic;
    this.mask = Layers.maskOrNull(reader.layout(), layers);
    checkK(reader, k);
  }

  /** Refuses {@code k < 1} and {@code k} above the index's live examples. */
  public static void checkK(IndexReader reader, int k) {
    if (k < 1) throw new BadInputException("-k must be at least 1, got " + k);
    if (k > reader.liveCount())
      throw new BadInputException("-k " + k + " is larger than the index " + reader.dir() + ", which holds " + reader.liveCount() + " live examples");
  }

  public Score score(long[] code) {
    return of(reader.knn(code, k, null, mask), k, statistic);
  }

  /** The scores of every code of {@code codes}. */
  public double[] values(CodeBlock codes, Progress progress) {
    double[] out = new double[codes.size()];
    for (int i = 0; i < out.length; i++) {
      out[i] = score(codes.code(i)).value();
      progress.update(i + 1, out.length);
    }
    return out;
  }

  /** The score from the {@code >= k} nearest hits of a code (a k-NN answer for any larger k works too). */
  public static Score of(Hits nearest, int k, Statistic statistic) {
    if (nearest.size() < k) throw new IllegalArgumentException(nearest.size() + " hits for k " + k);
    long sum = 0;
    for (int i = 0; i < k; i++) sum += nearest.dist(i);
    int kth = nearest.dist(k - 1);
    double mean = sum / (double) k;
    return new Score(statistic == Statistic.MEAN ? mean : kth, kth, mean, nearest.size() > 0 && nearest.dist(0) == 0, nearest);
  }
}
