package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.MatrixReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import io.actindex.core.Hits;
import java.util.Arrays;
import java.util.List;

/**
 * The k-NN score on full-precision activations, the reference the code score is compared with:
 * Sun, Ming, Zhu &amp; Li (ICML 2022) normalise each feature vector to unit length and score by the
 * Euclidean distance to the k-th nearest training vector, {@code sqrt(2 - 2 cos)}: exact brute
 * force over every training row (a measurement aid, not a search structure).
 */
public final class FloatKnnScore {
  private final double[][] train;
  private final Path trainFile;
  private final List<String> trainColumns, trainNotes;
  private final CsvMatrixReader.Header header;

  /**
   * Reads the training activations (.npy or .csv, one row per training example) and normalises
   * them; the first line of every CSV file (training and queries) is read under {@code header} (null = detect).
   */
  public FloatKnnScore(Path trainFile, CsvMatrixReader.Header header) {
    this.header = header == null ? CsvMatrixReader.Header.AUTO : header;
    Matrix m = read(trainFile, this.header);
    this.train = normalised(m.rows(), trainFile);
    this.trainFile = trainFile;
    this.trainColumns = m.columns();
    this.trainNotes = m.notes();
    if (train.length == 0) throw new BadInputException(trainFile + ": no rows");
  }

  /**
   * The rows of a file of floats, normalised, its column names (a CSV header; null when none) and
   * how it was read ({@link MatrixReader#notes()}, e.g. its CSV header).
   */
  public record Queries(double[][] rows, List<String> columns, List<String> notes) {}

  /** How the training file was read ({@link MatrixReader#notes()}, e.g. its CSV header). */
  public List<String> notes() {
    return trainNotes;
  }

  /** Number of training rows. */
  public int rows() {
    return train.length;
  }

  /**
   * The rows of a query file, normalised, checked against the training width and, when both files
   * have a header, the training header (columns are read by position: {@link SourceColumns#check}).
   */
  public Queries queries(Path file) {
    Matrix m = read(file, header);
    SourceColumns.check(trainColumns, "the training floats (" + trainFile + ")", m.columns(), file.toString());
    double[][] q = normalised(m.rows(), file);
    if (q.length > 0 && q[0].length != train[0].length)
      throw new BadInputException(file + ": rows have " + q[0].length + " values, the training floats have " + train[0].length);
    return new Queries(q, m.columns(), m.notes());
  }

  /** The k-th nearest normalised distance of every query row, over every training row. */
  public double[] scores(double[][] q, int k) {
    return scores(q, k, 1);
  }

  /** As {@link #scores(double[][], int)}, query rows on {@code threads} threads (the same result for any count). */
  public double[] scores(double[][] q, int k, int threads) {
    if (k > train.length) throw new BadParameterException("k", " " + k + " is larger than the " + train.length + " training rows of floats");
    double[] out = new double[q.length];
    Parallel.forEach(q.length, threads, Progress.NONE, i -> {
      double[] d = new double[train.length];
      for (int t = 0; t < train.length; t++) d[t] = distance(q[i], t);
      Arrays.sort(d);
      out[i] = d[k - 1];
    });
    return out;
  }

  /**
   * The refined score: the k-th nearest normalised float distance among each query's Hamming
   * candidates ({@code candidates[i]}: training row numbers = index ids), exact within the
   * candidates; a training example outside them is never looked at.
   */
  public double[] refined(double[][] q, Hits[] candidates, int k) {
    double[] out = new double[q.length];
    for (int i = 0; i < q.length; i++) {
      Hits h = candidates[i];
      if (h.size() < k) throw new IllegalArgumentException(h.size() + " candidates for k " + k);
      double[] d = new double[h.size()];
      for (int c = 0; c < d.length; c++) d[c] = distance(q[i], h.ord(c));
      Arrays.sort(d);
      out[i] = d[k - 1];
    }
    return out;
  }

  /** {@code |q - t| = sqrt(2 - 2 cos)} for unit vectors (an all-zero row: cos 0). */
  private double distance(double[] q, int t) {
    double dot = 0;
    double[] r = train[t];
    for (int j = 0; j < q.length; j++) dot += q[j] * r[j];
    return Math.sqrt(Math.max(0, 2 - 2 * dot));
  }

  private static double[][] normalised(double[][] rows, Path file) {
    for (double[] r : rows) {
      double n = 0;
      for (double v : r) n += v * v;
      n = Math.sqrt(n);
      if (n > 0) for (int j = 0; j < r.length; j++) r[j] /= n; // an all-zero row stays zero (cosine 0 to everything)
    }
    return rows;
  }

  private record Matrix(double[][] rows, List<String> columns, List<String> notes) {}

  private static Matrix read(Path file, CsvMatrixReader.Header header) {
    try (MatrixReader r = Encoders.openMatrix(file, header)) {
      int cols = r.cols();
      double[] buf = new double[1024 * cols];
      List<double[]> rows = new java.util.ArrayList<>();
      int m;
      while ((m = r.read(buf, 1024)) > 0) for (int i = 0; i < m; i++) rows.add(Arrays.copyOfRange(buf, i * cols, (i + 1) * cols));
      return new Matrix(rows.toArray(new double[0][]), r.columnNames(), List.copyOf(r.notes()));
    } catch (IOException e) {
      throw new UncheckedIOException(file + ": " + e.getMessage(), e);
    }
  }
}
