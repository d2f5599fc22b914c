package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.Encoders;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.io.SafetensorsReader;
import io.actindex.encode.mlp.Mlp;
import io.actindex.index.store.IndexReader;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Path;
import java.util.Locale;
import java.util.Map;

/**
 * Turns a query source (activations, codes, or inputs run through the index's stored model) into
 * query codes encoded exactly as the index was built (rule, threshold, layers kept), and refuses
 * codes whose layout does not fit the index with a {@link BadInputException} saying expected vs got.
 *
 * <pre>{@code
 * QueryCodes q = QuerySource.load(reader, Source.activations(Path.of("test.npy")), RowRange.parse("0:10"));
 * }</pre>
 */
public final class QuerySource {
  private QuerySource() {}

  public static QueryCodes load(IndexReader reader, Source source, RowRange rows) {
    return load(reader, source, rows, Progress.NONE);
  }

  public static QueryCodes load(IndexReader reader, Source source, RowRange rows, Progress progress) {
    RowRange range = rows == null ? RowRange.ALL : rows;
    java.util.List<String> notes = new java.util.ArrayList<>();
    Encoded e = encode(reader, source, range, Encoding.CHUNK, progress, "query", notes, 0);
    return new QueryCodes(e.codes(), range.from(), notes, e.columns());
  }

  /**
   * Query codes and the activations they came from (row-major, one value per bit of the index
   * layout), for refinement by kept magnitudes. A codes source has no activations: refused. A value
   * beyond float32's range is held as +-Infinity ({@link #farRows}).
   */
  public record Queries(QueryCodes codes, float[] activations) {
    /**
     * The file rows (ascending) whose activations do not fit float32 (above about 3.4e38 in size),
     * held as +-Infinity: their distance to any kept magnitude vector, counted on a unit that holds
     * one, is +Infinity ({@link Refine#distance}).
     */
    public long[] farRows() {
      return rowsPastFloat32(activations, codes.codes().layout().bits(), codes.firstRow());
    }
  }

  /** The file rows ({@code firstRow} + index) of row-major {@code activations}, {@code d} a row, that hold an infinite value. */
  private static long[] rowsPastFloat32(float[] activations, int d, long firstRow) {
    if (activations == null) return new long[0];
    long[] far = new long[activations.length / d];
    int count = 0;
    for (int i = 0; i < far.length; i++)
      for (int j = i * d; j < i * d + d; j++)
        if (Float.isInfinite(activations[j])) {
          far[count++] = firstRow + i;
          break;
        }
    return java.util.Arrays.copyOf(far, count);
  }

  /**
   * As {@link #load}, keeping the query activations; a codes source is a {@link BadInputException}.
   * A row whose activations do not fit float32 is kept (as +-Infinity, {@link Queries#farRows}) with
   * a note naming the file and the rows, not refused: it is answered, as far from every example.
   */
  public static Queries loadWithActivations(IndexReader reader, Source source, RowRange rows, Progress progress) {
    if (source.kind() == Source.Kind.CODES)
      throw new BadInputException(source.file() + ": refinement needs the queries' activations (`Source.activations`) or inputs (`Source.inputs`), not codes");
    RowRange range = rows == null ? RowRange.ALL : rows;
    java.util.List<String> notes = new java.util.ArrayList<>();
    Encoded e = encode(reader, source, range, Encoding.CHUNK, progress, "query", notes, Encoding.KEEP_ALL_CAST);
    long[] far = rowsPastFloat32(e.activations(), e.codes().layout().bits(), range.from());
    if (far.length > 0) notes.add(farNote(source, far));
    return new Queries(new QueryCodes(e.codes(), range.from(), notes, e.columns()), e.activations());
  }

  /** Rows listed by number in {@link #farNote}; past them, how many more. */
  private static final int FAR_LISTED = 10;

  /** One line naming the file and the rows whose activations do not fit float32, and what is done with them. */
  static String farNote(Source source, long[] far) {
    StringBuilder rows = new StringBuilder(far.length == 1 ? "row " : "rows ");
    for (int i = 0; i < Math.min(far.length, FAR_LISTED); i++) rows.append(i == 0 ? "" : ", ").append(far[i]);
    if (far.length > FAR_LISTED) rows.append(" and ").append(far.length - FAR_LISTED).append(" more");
    String through = source.kind() == Source.Kind.INPUTS ? " through the model" : "";
    return source.file() + ": note: " + rows + " (0-based) " + (far.length == 1 ? "has" : "have") + " activations" + through
        + " beyond float32's range (about 3.4e38), which the kept magnitudes are not compared with: a float distance counting such a unit is"
        + " infinite, so an OOD score flags such a row out and a refined search keeps its candidates in Hamming order (codes are exact)";
  }

  /**
   * What a file is when nobody said (compare {@code --index} without {@code --kind}): what the index
   * was built from (as {@code report} takes it), except that for an index built from a model a
   * one-matrix file whose width fits the codes ({@link Layers#align}: the index layout or the
   * model's hidden layers) and not the model's inputs holds hidden activations. A width that fits
   * both cannot be told apart: refused, naming the file and asking for the kind ({@code option}).
   * {@code header}: whether a CSV file's first line is a header.
   */
  /** {@code file} as a source of the kind {@code given}, or (null) of the kind {@link #kindOf} tells. */
  public static Source sourceOf(IndexReader reader, Source.Kind given, Path file, CsvMatrixReader.Header header, String option) {
    return new Source(given != null ? given : kindOf(reader, file, header, option), file, null, header);
  }

  public static Source.Kind kindOf(IndexReader reader, Path file, CsvMatrixReader.Header header, String option) {
    BuildInfo info = BuildInfo.fromProperties(reader.properties(), reader.dir().toString());
    if (info.kind() != Source.Kind.INPUTS) return info.kind();
    String name = file.getFileName().toString().toLowerCase(Locale.ROOT);
    if (name.endsWith(".npz")) return Source.Kind.ACTIVATIONS; // one array per layer; inputs are one matrix
    byte[] model = reader.attachment(BuildInfo.MODEL);
    if (model == null || !(name.endsWith(".npy") || name.endsWith(".csv"))) return Source.Kind.INPUTS; // the reader says what is wrong
    try (MatrixReader m = Encoders.openMatrix(file, header)) {
      long cols = m.cols();
      int inputs = modelInputs(info, model);
      if (inputs < 0) return Source.Kind.INPUTS; // an order that needs the input width to resolve: reading the file as inputs says what fits
      CodeLayout hidden = info.sourceLayout();
      boolean codesWidth = cols == reader.layout().bits() || (hidden != null && cols == hidden.bits());
      if (!codesWidth) return Source.Kind.INPUTS;
      if (cols != inputs) return Source.Kind.ACTIVATIONS;
      throw new BadInputException(file + ": its " + cols + " columns could be the inputs of the model the index " + reader.dir()
          + " was built from (" + inputs + " inputs) or its hidden activations (" + (cols == reader.layout().bits() ? reader.layout() : hidden)
          + "); say which with " + option + " inputs or " + option + " activations");
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * The input width of the model stored in an index ({@code model}, its safetensors bytes), or -1
   * when its layer order cannot be resolved without knowing that width.
   */
  private static int modelInputs(BuildInfo info, byte[] model) throws IOException {
    try (SafetensorsReader r = SafetensorsReader.open(BuildInfo.MODEL, model)) {
      return Mlp.load(r, info.encode().layerOrder(), info.encode().outputLayer(), -1).mlp().inputs();
    } catch (BadInputException e) {
      return -1;
    }
  }

  /**
   * Codes in the index layout and, when asked for, their activations aligned to the same columns;
   * the file's column names (its CSV header) or null; and, when asked for, those activations
   * quantised without holding them (null otherwise).
   */
  record Encoded(CodeBlock codes, float[] activations, java.util.List<String> columns, StreamedMagnitudes.Result magnitudes) {}

  /**
   * Encodes {@code source} with the index's stored options and aligns it to the index layout,
   * keeping the activations (null for a codes source) as {@code keep} says ({@link Encoding#read(Source,
   * Encoding.Model, EncodeOptions, CodeLayout, RowRange, int, Progress, long)}: 0 none, {@link
   * Encoding#KEEP_ALL} all, else at most that many values or none).
   */
  static Encoded encode(IndexReader reader, Source source, RowRange range, int chunk, Progress progress, String what,
      java.util.List<String> notes, long keep) {
    return encode(reader, source, range, chunk, progress, what, notes, keep, 0, null);
  }

  /**
   * As above; with {@code magnitudeBits} above 0 (and {@code keep} 0) the activations are quantised
   * to that many bits in a second read of the file ({@link StreamedMagnitudes}, refusing a file that
   * {@code command} saw change between the reads) instead of being kept.
   */
  static Encoded encode(IndexReader reader, Source source, RowRange range, int chunk, Progress progress, String what,
      java.util.List<String> notes, long keep, int magnitudeBits, String command) {
    BuildInfo info = BuildInfo.fromProperties(reader.properties(), "index");
    CodeLayout target = reader.layout();
    Encoding.Model model = Encoding.Model.of(source.model());
    if (source.kind() == Source.Kind.INPUTS && model == null) {
      byte[] stored = reader.attachment(BuildInfo.MODEL);
      if (stored == null)
        throw new BadInputException(source.file() + ": " + what + " given as inputs, but the index holds no model; give activations or codes");
      model = new Encoding.Model(null, reader.dir().resolve(BuildInfo.MODEL) + " (the model stored in the index)", stored);
    }
    if (info.kind() == Source.Kind.CODES && source.kind() != Source.Kind.CODES) // add refuses these; a query only reads
      notes.add(source.file() + ": note: the index " + reader.dir() + " was built from codes and records no rule that made them; these "
          + what + " rows are binarized by the default rule (a unit is on when its value is > 0), which may not be how its codes were made");
    // a codes file is read in the layout the index was built from when that was a codes file too
    CodeLayout codesLayout = source.kind() != Source.Kind.CODES ? null
        : info.kind() == Source.Kind.CODES ? info.sourceLayout() : target;
    EncodeOptions options = oneMatrixOptions(source, info, target);
    Progress bar = progress == null ? Progress.NONE : progress;
    // activations given for an index of a model's activations (after ReLU) are taken after ReLU
    boolean relu = info.kind() == Source.Kind.INPUTS && source.kind() == Source.Kind.ACTIVATIONS;
    StreamedMagnitudes.Ranges ranges = magnitudeBits == 0 || source.kind() == Source.Kind.CODES ? null
        : new StreamedMagnitudes.Ranges(source, command, layout -> {
          align(new CodeBlock(layout, 0, new long[0]), reader, info, source); // the refusal of a layout that does not fit, before reading
          return Layers.alignColumns(layout, target, info.sourceLayout());
        }, relu, magnitudeBits);
    Encoding.Read read = ranges == null ? Encoding.read(source, model, options, codesLayout, range, chunk, bar, keep)
        : Encoding.read(source, model, options, codesLayout, range, chunk, StreamedMagnitudes.firstRead(bar), ranges);
    // notes about the file itself (its CSV header); the model's layers were reported at build
    for (String n : read.notes()) if (n.startsWith(source.file() + ":")) notes.add(n);
    java.util.List<String> builtColumns = SourceColumns.of(reader.properties(), reader.dir().toString());
    if (source.kind() == info.kind()) // activations against activations, inputs against inputs
      SourceColumns.check(builtColumns, "the CSV the index " + reader.dir() + " was built from", read.columns(), source.file().toString());
    else if (info.kind() == Source.Kind.INPUTS && builtColumns != null && !SourceColumns.numbered(builtColumns) // pandas' numbers: any frame's
        && builtColumns.equals(read.columns()))
      throw new BadInputException(source.file() + ": its header names the model inputs the index " + reader.dir() + " was built from, but it"
          + " was given as " + source.kind().name().toLowerCase(java.util.Locale.ROOT) + "; pass it with `Source.inputs`");
    CodeBlock raw = read.codes();
    CodeBlock codes = align(raw, reader, info, source);
    CodeLayout split = raw.layout().bits() == target.bits() ? target : info.sourceLayout();
    if (raw.layout().segments().size() == 1 && split != null && split.segments().size() > 1 && split.bits() == raw.layout().bits())
      notes.add(source.file() + ": note: its " + raw.layout().bits() + " columns are read as the layers " + split + " side by side, in that order");
    float[] values = read.activations() == null ? null : Layers.pickColumns(read.activations(), raw.size(), raw.layout().bits(),
        Layers.alignColumns(raw.layout(), target, info.sourceLayout()));
    if ((values != null && relu && reluInPlace(values)) || (ranges != null && ranges.negative()))
      notes.add(source.file() + ": note: the index keeps its model's hidden activations after ReLU; the negative values here (activations"
          + " before ReLU, e.g. hooked on nn.Linear) are taken as 0, as ReLU does");
    StreamedMagnitudes.Result kept = ranges == null || raw.size() == 0 ? null
        : StreamedMagnitudes.quantise(source, model, options, codesLayout, range, chunk, StreamedMagnitudes.secondRead(bar), raw, ranges);
    return new Encoded(codes, values, read.columns(), kept);
  }

  /** {@link Layers#align} of {@code raw} to the index layout, its refusal with {@link #inputsHint}. */
  private static CodeBlock align(CodeBlock raw, IndexReader reader, BuildInfo info, Source source) {
    try {
      return Layers.align(raw, reader.layout(), info.sourceLayout(), source.file().toString(), source.kind());
    } catch (BadInputException e) {
      throw inputsHint(e, reader, info, source, raw.layout().bits());
    }
  }

  /**
   * {@code refusal} of rows that do not fit the index's layout, with a hint when they were given as
   * activations or codes but have exactly as many columns as the model stored in the index takes
   * inputs (the usual slip: the model's inputs passed as activations).
   */
  private static BadInputException inputsHint(BadInputException refusal, IndexReader reader, BuildInfo info, Source source, int cols) {
    byte[] model = reader.attachment(BuildInfo.MODEL);
    if (source.kind() == Source.Kind.INPUTS || model == null) return refusal;
    try {
      if (modelInputs(info, model) != cols) return refusal;
    } catch (IOException | RuntimeException e) { // the hint is a courtesy: the refusal stands as it was
      return refusal;
    }
    return new BadInputException(refusal.getMessage() + ". Its " + cols + " columns match the " + cols + " inputs of the model the index "
        + reader.dir() + " keeps: if these rows are the model's inputs, pass them with `Source.inputs`");
  }

  /**
   * The index's encode options, or, for one {@code .npy}/{@code .csv} matrix of activations against
   * an index of several layers kept by name ({@code build --layers}) or binarized by per-layer
   * medians, the same options for that matrix as one layer: no layer names to pick (a single matrix
   * has none) and the medians of the layers it is read as, side by side in that order (the index's
   * layers when it is as wide as them, else the layers it was built from; any other width is left
   * to {@link Layers#align} to refuse).
   */
  private static EncodeOptions oneMatrixOptions(Source source, BuildInfo info, CodeLayout target) {
    EncodeOptions o = info.encode();
    String name = source.file().getFileName().toString().toLowerCase(Locale.ROOT);
    boolean oneMatrix = source.kind() == Source.Kind.ACTIVATIONS && (name.endsWith(".npy") || name.endsWith(".csv"));
    boolean named = o.layers() != null && o.layers().size() > 1, medians = o.medians() != null && o.medians().size() > 1;
    if (!oneMatrix || !(named || medians)) return o;
    if (!medians) return o.withLayers(null);
    int cols;
    try (MatrixReader m = Encoders.openMatrix(source.file(), source.header())) {
      cols = m.cols();
    } catch (IOException e) {
      throw new UncheckedIOException(source.file() + ": " + e.getMessage(), e);
    }
    CodeLayout split = cols == target.bits() ? target : info.sourceLayout();
    if (split == null || split.bits() != cols) return o.withLayers(null); // refused by Layers.align, naming the layouts
    double[] joined = new double[cols];
    int at = 0;
    for (CodeLayout.Segment seg : split.segments()) {
      double[] med = o.medians().get(seg.name());
      if (med == null || med.length != seg.bits()) return o; // refused by the encoder, naming the layer
      System.arraycopy(med, 0, joined, at, med.length);
      at += med.length;
    }
    return o.withLayers(null).withMedians(Map.of(Encoders.DEFAULT_LAYER, joined));
  }

  /**
   * Sets negative values to 0; true if there were any. The codes do not change (a model's rule
   * compares with a threshold of 0 or more), but kept magnitudes are after ReLU: a cosine or a
   * distance against values before ReLU would rank by other numbers than the model's.
   */
  private static boolean reluInPlace(float[] values) {
    boolean any = false;
    for (int i = 0; i < values.length; i++)
      if (values[i] < 0) {
        values[i] = 0;
        any = true;
      }
    return any;
  }
}
