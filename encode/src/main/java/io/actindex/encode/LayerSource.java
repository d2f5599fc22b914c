package io.actindex.encode;

import io.actindex.encode.io.MatrixReader;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.util.List;

/**
 * Activations of one or more named layers, read chunk by chunk in lockstep (same rows). The
 * values of layer {@code i} come as floats when {@link #floats(int)}, else as doubles.
 */
interface LayerSource extends AutoCloseable {
  String source();

  /** The file whose rows these are: {@link #source()}, except for a model run on an inputs file (that file). */
  default String rowSource() {
    return source();
  }

  List<String> names();

  int[] widths();

  /** Rows, or -1 if unknown. */
  long rows();

  boolean floats(int layer);

  /** How the inputs were read and interpreted, one line each (header decisions, model layers). */
  List<String> notes();

  /** The column names of a source read from one file that has them (a CSV header line), else null. */
  List<String> columnNames();

  /**
   * Reads up to {@code m} rows: layer {@code i} into {@code f[i]} (if floats) or {@code d[i]},
   * which the source may replace by its own array of at least {@code m * width} values. Returns
   * the rows read, 0 at the end.
   */
  int read(int m, float[][] f, double[][] d) throws IOException;

  @Override
  void close() throws IOException;

  /** Opens a fresh source positioned at row 0 (a stream is read twice for medians). */
  interface Opener {
    LayerSource open() throws IOException;
  }

  /** Layers each read from its own matrix (an .npy file, .npz members, a CSV file). */
  final class Readers implements LayerSource {
    private final String source;
    private final List<String> names;
    private final List<MatrixReader> readers;
    private final AutoCloseable owner; // e.g. the .npz archive, closed last; nullable

    Readers(String source, List<String> names, List<MatrixReader> readers, AutoCloseable owner) {
      this.source = source;
      this.names = List.copyOf(names);
      this.readers = List.copyOf(readers);
      this.owner = owner;
      for (int i = 1; i < readers.size(); i++)
        if (readers.get(i).rows() != readers.get(0).rows())
          throw new BadInputException(source + ": layer " + BadInputException.quote(names.get(i)) + " has " + readers.get(i).rows() + " rows but layer "
              + BadInputException.quote(names.get(0)) + " has " + readers.get(0).rows() + "; every layer needs one row per example"
              + (readers.get(i).cols() == readers.get(0).cols() ? " (both have " + readers.get(0).cols() + " columns: saved as units by examples?"
                  + " save each array transposed, a.T)" : ""));
    }

    @Override
    public String source() {
      return source;
    }

    @Override
    public List<String> names() {
      return names;
    }

    @Override
    public int[] widths() {
      return readers.stream().mapToInt(MatrixReader::cols).toArray();
    }

    @Override
    public long rows() {
      return readers.get(0).rows();
    }

    @Override
    public boolean floats(int layer) {
      return readers.get(layer).exactInFloat();
    }

    @Override
    public List<String> notes() {
      return readers.stream().flatMap(r -> r.notes().stream()).toList();
    }

    @Override
    public List<String> columnNames() {
      return readers.size() == 1 ? readers.getFirst().columnNames() : null;
    }

    @Override
    public int read(int m, float[][] f, double[][] d) throws IOException {
      int got = -1;
      for (int i = 0; i < readers.size(); i++) {
        MatrixReader r = readers.get(i);
        int n = floats(i) ? r.read(f[i], m) : r.read(d[i], m);
        if (got >= 0 && n != got)
          throw new BadInputException(source + ": layer " + BadInputException.quote(names.get(i)) + " ends at row " + r.position() + ", the other layers do not");
        got = n;
      }
      return got;
    }

    @Override
    public void close() throws IOException {
      IOException first = null;
      for (MatrixReader r : readers) {
        try {
          r.close();
        } catch (IOException e) {
          if (first == null) first = e;
        }
      }
      if (owner != null) {
        try {
          owner.close();
        } catch (Exception e) {
          if (first == null) first = e instanceof IOException io ? io : new IOException(e);
        }
      }
      if (first != null) throw first;
    }
  }
}
