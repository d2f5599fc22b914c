package io.actindex.query;

import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.NeuronStats;
import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.OutputFiles;
import io.actindex.core.DiskFull;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import io.actindex.core.Forked;
import io.actindex.index.meta.RowRefusal;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.Manifest;
import io.actindex.index.store.StoreIo;
import io.actindex.index.store.Magnitudes;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.stream.Stream;

/**
 * Builds an index from a source, or adds a source to an existing index, with optional metadata.
 *
 * <p>Everything is read and checked before the index is touched: the source is encoded chunk by
 * chunk (one chunk of floats at a time; the codes are kept), the metadata CSV is read and its row
 * count compared with the codes, and only then are the codes written as one segment in one atomic
 * commit. A build that fails after creating its folder removes the folder again.
 */
public final class IndexBuilder {
  private IndexBuilder() {}

  /**
   * Bits per kept magnitude when a build does not say: 8 (one byte per unit; measured on the UCI
   * digits MLP, refined 1-NN accuracy matched full float cosine, see docs/commands/nearest.md).
   */
  public static final int DEFAULT_MAGNITUDE_BITS = 8;

  /** Index property: bits per kept magnitude ({@code 0} = none kept). */
  public static final String MAGNITUDES = "build.magnitudes.bits";

  /**
   * A new index in {@code dir} (absent or empty). {@code encode.layers()} are the layers to keep
   * (null = all); {@code codesLayout} tells the layout of a codes file when the file cannot (packed
   * bits), else null; {@code meta} may be null; {@code chunkRows <= 0} means the default;
   * {@code magnitudeBits} (2, 4 or 8; 0 = none) keeps each example's activations quantised beside
   * its code (activations and inputs only; a codes source keeps none), -1 = the default;
   * {@code threads} are the workers that build the search structures (0 = one per core).
   */
  public record BuildParams(Path dir, Source source, MetaCsv.Options meta, EncodeOptions encode, CodeLayout codesLayout,
      int chunkRows, int magnitudeBits, int threads) {
    public BuildParams {
      Parallel.checkThreadsOrAuto(threads);
      java.util.Objects.requireNonNull(dir, "dir");
      java.util.Objects.requireNonNull(source, "source");
      if (encode == null) encode = new EncodeOptions(BinarizeRule.POSITIVE, 0, null);
      if (magnitudeBits < 0) magnitudeBits = source.kind() == Source.Kind.CODES ? 0 : DEFAULT_MAGNITUDE_BITS;
      if (magnitudeBits != 0 && !Magnitudes.supported(magnitudeBits))
        throw new BadParameterException("magnitudeBits", " must be 2, 4 or 8 (0 keeps none, -1 the default), got " + magnitudeBits);
      if (magnitudeBits != 0 && source.kind() == Source.Kind.CODES)
        throw new BadInputException(source.file() + ": codes carry no magnitudes to keep; build from activations or a model's inputs");
    }

    /** With one thread per core for the search structures. */
    public BuildParams(Path dir, Source source, MetaCsv.Options meta, EncodeOptions encode, CodeLayout codesLayout,
        int chunkRows, int magnitudeBits) {
      this(dir, source, meta, encode, codesLayout, chunkRows, magnitudeBits, 0);
    }

    /** With the default magnitudes. */
    public BuildParams(Path dir, Source source, MetaCsv.Options meta, EncodeOptions encode, CodeLayout codesLayout,
        int chunkRows) {
      this(dir, source, meta, encode, codesLayout, chunkRows, -1);
    }

    public BuildParams(Path dir, Source source, MetaCsv.Options meta) {
      this(dir, source, meta, null, null, 0);
    }
  }

  /**
   * New rows for the index in {@code dir}, encoded as the index was built; {@code threads} build the
   * new segment's search structures and any merge it triggers (0 = one per core).
   */
  public record AddParams(Path dir, Source source, MetaCsv.Options meta, int chunkRows, int threads) {
    public AddParams {
      java.util.Objects.requireNonNull(dir, "dir");
      java.util.Objects.requireNonNull(source, "source");
      Parallel.checkThreadsOrAuto(threads);
    }

    public AddParams(Path dir, Source source, MetaCsv.Options meta, int chunkRows) {
      this(dir, source, meta, chunkRows, 0);
    }
  }

  /**
   * What was written: ids {@code [firstId, firstId + rows)} in the layout {@code layout}; {@code
   * notes} say how the source was read (CSV header decision, a model's layer order, code layers
   * and output layer); {@code encode} are the options in force (null for a codes file);
   * {@code magnitudes} says how the kept magnitudes compare with the float32 activations (null
   * when none were kept); {@code warnings} are problems that did not undo the commit (old files
   * left to clean).
   */
  public record Result(int firstId, int rows, CodeLayout layout, List<String> notes, EncodeOptions encode,
      Quantisation magnitudes, List<String> warnings) {
    public Result {
      notes = notes == null ? List.of() : List.copyOf(notes);
      warnings = warnings == null ? List.of() : List.copyOf(warnings);
    }

    public Result(int firstId, int rows, CodeLayout layout, List<String> notes, EncodeOptions encode) {
      this(firstId, rows, layout, notes, encode, null, null);
    }

    public Result(int firstId, int rows, CodeLayout layout) {
      this(firstId, rows, layout, null, null, null, null);
    }
  }

  /**
   * Kept magnitudes against the float32 activations they came from: bits per value, bytes per
   * example of the stored rows, the largest absolute error of one value, the root-mean-square
   * error, and that RMS error relative to the RMS of the values.
   */
  public record Quantisation(int bits, int bytesPerExample, double maxAbsError, double rmsError, double relativeRmsError) {
    /** Compares {@code m} with the {@code values} it was quantised from. */
    public static Quantisation of(Magnitudes m, float[] values) {
      int d = m.units();
      Errors errors = new Errors(d);
      float[] row = new float[d];
      for (int i = 0; i < m.count(); i++) {
        m.dequantise(i, row, 0);
        errors.add(row, values, i * d);
      }
      return errors.result(m);
    }

    /** The sums {@link #of} takes, row by row: for rows quantised one at a time. */
    static final class Errors {
      private final int units;
      private double max, sq, norm;

      Errors(int units) {
        this.units = units;
      }

      /** One row: its dequantised values, and the values it came from at {@code values[from ..]}. */
      void add(float[] dequantised, float[] values, int from) {
        for (int j = 0; j < units; j++) {
          double v = values[from + j], e = Math.abs(dequantised[j] - v);
          max = Math.max(max, e);
          sq += e * e;
          norm += v * v;
        }
      }

      Quantisation result(Magnitudes m) {
        long count = Math.max(1, (long) m.count() * units);
        return new Quantisation(m.bits(), Magnitudes.rowBytes(units, m.bits()), max, Math.sqrt(sq / count),
            norm == 0 ? 0 : Math.sqrt(sq / norm));
      }
    }
  }

  public static Result build(BuildParams p, Progress progress) {
    return build(p, progress, StoreIo.REAL);
  }

  /**
   * As {@link #build(BuildParams, Progress)}, writing through {@code io} (tests inject failures
   * there). The search structures are built with {@code p.threads()} workers (0 = one per core).
   */
  public static Result build(BuildParams p, Progress progress, StoreIo io) {
    return Forked.withThreads(p.threads(), () -> buildHere(p, progress, io));
  }

  private static Result buildHere(BuildParams p, Progress progress, StoreIo io) {
    if (p.source().kind() == Source.Kind.INPUTS && p.source().model() == null)
      throw new BadInputException(p.source().file() + ": building from inputs needs a model file");
    checkEmptyOrAbsent(p.dir());
    // kept magnitudes read the file twice (the floats' ranges, then the floats quantised), so that no
    // more than a chunk of floats is alive at a time; the bar counts both reads
    Encoding.Model net = Encoding.Model.of(p.source().model());
    int chunk = chunk(p.chunkRows());
    Progress bar = orNone(progress);
    List<String> layers = p.encode().layers();
    StreamedMagnitudes.Ranges ranges = p.magnitudeBits() == 0 ? null : new StreamedMagnitudes.Ranges(p.source(), "build",
        layout -> Layers.columns(layout, keptLayout(layout, layers)), false, p.magnitudeBits());
    Encoding.Read read = Encoding.read(p.source(), net, p.encode(), p.codesLayout(), RowRange.ALL, chunk,
        ranges == null ? bar : StreamedMagnitudes.firstRead(bar), ranges);
    CodeBlock raw = read.codes();
    CodeBlock codes = Layers.project(raw, keptLayout(raw.layout(), layers));
    if (codes.size() == 0) throw new BadInputException(p.source().file() + ": no rows");
    StreamedMagnitudes.Result kept = ranges == null ? null
        : StreamedMagnitudes.quantise(p.source(), net, p.encode(), p.codesLayout(), RowRange.ALL, chunk, StreamedMagnitudes.secondRead(bar),
            raw, ranges);
    Magnitudes mags = kept == null ? null : kept.magnitudes();
    List<Map<String, String>> meta = readMeta(p.meta(), codes, p.source());
    byte[] model = p.source().kind() == Source.Kind.INPUTS ? readAll(p.source().model()) : null;
    // the options in force (per-neuron medians filled in) are what later queries must use
    EncodeOptions used = read.options() != null ? read.options() : p.encode();
    BuildInfo info = new BuildInfo(p.source().kind(), raw.layout(), model != null, used);
    Map<String, String> props = new java.util.HashMap<>(info.toProperties());
    props.put(MAGNITUDES, Integer.toString(mags == null ? 0 : mags.bits()));
    SourceColumns.put(props, read.columns());
    props.put(Manifest.BUILD_ROWS, Integer.toString(codes.size())); // until they are committed, the index is an unfinished build

    boolean existed = Files.exists(p.dir());
    IndexWriter created;
    try {
      created = IndexWriter.create(p.dir(), codes.layout(), props, io);
    } catch (BadInputException e) {
      if (DiskFull.in(e)) removeBuilt(p.dir(), existed, e); // failed while writing: the retry needs an empty folder
      else if (!existed) deleteIfEmpty(p.dir()); // refused before writing: only the empty folder may be ours
      throw e;
    } catch (RuntimeException | Error e) {
      removeBuilt(p.dir(), existed, e); // failed while writing (disk full...): the retry needs an empty folder
      throw e;
    }
    try (IndexWriter w = created) {
      if (model != null) w.putAttachment(BuildInfo.MODEL, model);
      int first = addRows(w, codes, mags, meta, p.meta());
      List<String> notes = new ArrayList<>(read.notes());
      notes.addAll(constantLayers(codes, p.source().kind() == Source.Kind.INPUTS ? p.source().model() : p.source().file(),
          p.source().kind() == Source.Kind.ACTIVATIONS));
      String spelt = meta == null ? null : LabelSpellings.note(p.meta().file().toString(), meta, null);
      if (spelt != null) notes.add(spelt);
      if (meta != null && meta.stream().noneMatch(row -> row.containsKey("label")))
        notes.add(p.meta().file() + ": note: no example has a label (no column 'label' with a value; `labelColumn` NAME takes another, such as"
            + " scikit-learn's 'target'), so label votes, purity and label conflicts have none to count" + labelLike(meta));
      String alone = meta == null ? null : labelsAlone(meta);
      if (alone != null) notes.add(p.meta().file() + ": note: " + alone);
      return new Result(first, codes.size(), codes.layout(), notes, read.options(), kept == null ? null : kept.quantisation(),
          w.takeWarnings());
    } catch (RuntimeException | Error e) {
      removeBuilt(p.dir(), existed, e);
      // the writer's refusal speaks of a change to an index; here there was no index before
      if (DiskFull.in(e)) throw DiskFull.refusal("index " + p.dir(), existed ? "the index was not built, the folder is empty again"
          : "the index was not built, the folder was removed", e);
      throw e;
    }
  }

  /**
   * Labels are classes, compared as text. When most labelled rows (more than half, from 20 on: our
   * choice) carry a label no other row has, the column is a continuous target or an id: every vote then
   * goes against the query and every near-duplicate pair is a label conflict. Says so, else null.
   */
  static String labelsAlone(List<Map<String, String>> meta) {
    Map<String, Integer> count = new java.util.HashMap<>();
    for (Map<String, String> row : meta) if (row.get("label") != null) count.merge(row.get("label"), 1, Integer::sum);
    int labelled = count.values().stream().mapToInt(Integer::intValue).sum();
    long alone = count.values().stream().filter(c -> c == 1).count();
    if (labelled < 20 || 2 * alone <= labelled) return null;
    return alone + " of the " + labelled + " labels are written by no other row (a continuous target such as a price, or an id, as the"
        + " label?): labels are classes compared as text, so label votes, purity and label conflicts (every near-duplicate pair of"
        + " different values is one) mean little; give class labels, and keep such a value in another column";
  }

  /** "; column 'Label' looks like one: ..." for metadata columns named like a label in another case or under another usual name. */
  private static String labelLike(List<Map<String, String>> meta) {
    java.util.Set<String> names = new java.util.LinkedHashSet<>();
    for (Map<String, String> row : meta) names.addAll(row.keySet());
    List<String> like = names.stream().filter(io.actindex.encode.io.CsvMatrixReader::looksLikeLabel).map(n -> "'" + n + "'").toList();
    return like.isEmpty() ? "" : "; column " + String.join(", ", like) + (like.size() == 1 ? " looks" : " look") + " like one: name it with `labelColumn`";
  }

  /**
   * A note for each layer whose every unit is on in every row, or off in every row: its codes are
   * all alike and add nothing to any distance. Activations after a sigmoid or softplus are all above
   * 0, so under the default rule every unit is on; nothing else says so.
   */
  static List<String> constantLayers(CodeBlock codes, Path file, boolean activations) {
    List<String> notes = new ArrayList<>();
    if (codes.size() < 2) return notes;
    NeuronStats stats = new NeuronStats(codes.layout());
    stats.add(codes);
    for (NeuronStats.LayerSummary l : stats.perLayer()) {
      boolean on = l.alwaysOn() == l.neurons();
      if (!on && l.dead() != l.neurons()) continue;
      notes.add(file + ": layer " + l.layer() + ": every unit is " + (on ? "on" : "off") + " in every row (" + l.neurons() + " units, " + codes.size()
          + " rows), so the layer adds nothing to any distance" + (on && activations ? "; activations that are all above the threshold (after a"
              + " sigmoid or softplus, not a ReLU?) need `BinarizeRule.MEDIAN` or a `threshold` inside their range" : ""));
    }
    return notes;
  }

  public static Result add(AddParams p, Progress progress) {
    CodeBlock codes;
    List<Map<String, String>> meta;
    List<String> notes = new ArrayList<>();
    EncodeOptions encode;
    StreamedMagnitudes.Result kept = null;
    try (IndexReader r = IndexReader.open(p.dir())) {
      int bits = magnitudeBits(r);
      BuildInfo built = BuildInfo.fromProperties(r.properties(), p.dir().toString());
      checkKind(built, p);
      encode = p.source().kind() == Source.Kind.CODES ? null : built.encode();
      if (p.source().kind() == Source.Kind.INPUTS && p.source().model() != null) {
        byte[] stored = r.attachment(BuildInfo.MODEL);
        if (stored != null && !Arrays.equals(stored, readAll(p.source().model())))
          throw new BadInputException(p.source().model() + ": differs from the model the index was built with; leave the model out to use the stored one");
      }
      if (bits > 0 && p.source().kind() == Source.Kind.CODES)
        throw new BadInputException(p.source().file() + ": the index keeps magnitudes beside its codes; add activations or inputs, not codes");
      // kept magnitudes read the file twice, as build does (StreamedMagnitudes), so the rows' floats are never held
      QuerySource.Encoded enc = QuerySource.encode(r, p.source(), RowRange.ALL, chunk(p.chunkRows()), orNone(progress),
          "rows to add", notes, 0, bits, "add");
      codes = enc.codes();
      if (codes.size() == 0) throw new BadInputException(p.source().file() + ": no rows");
      kept = enc.magnitudes();
      meta = readMeta(p.meta(), codes, p.source());
      if (meta != null) {
        String spelt = LabelSpellings.note(p.meta().file().toString(), meta, label -> LabelSpellings.inIndex(r.meta(), label));
        if (spelt != null) notes.add(spelt);
      }
      if (meta != null)
        for (int i = 0; i < meta.size(); i++) {
          String key = meta.get(i).get("key");
          if (key != null && r.meta().idOfKey(key) >= 0)
            throw new BadInputException(p.meta().file() + ": data row " + (i + 1) + ": key '" + key + "' is already in the index");
        }
    }
    try (IndexWriter w = IndexWriter.open(p.dir())) {
      Magnitudes mags = kept == null ? null : kept.magnitudes();
      int first = Forked.withThreads(p.threads(), () -> addRows(w, codes, mags, meta, p.meta()));
      return new Result(first, codes.size(), codes.layout(), notes, encode, kept == null ? null : kept.quantisation(),
          w.takeWarnings());
    }
  }

  /**
   * An index built from codes records no rule that made them from activations (nor a model): rows
   * of activations or inputs would be binarized by the default rule, perhaps unlike its codes.
   */
  private static void checkKind(BuildInfo built, AddParams p) {
    Source.Kind kind = p.source().kind();
    if (built.kind() == Source.Kind.CODES && kind != Source.Kind.CODES)
      throw new BadInputException(p.source().file() + ": the index " + p.dir() + " was built from codes (layout " + built.sourceLayout()
          + ") and does not record how they were made from " + kind.name().toLowerCase(java.util.Locale.ROOT)
          + "; binarize these rows the way its codes were made and add them with `Source.codes`");
  }

  /** {@code w.add}; a metadata row the index refuses is named by its file and data row (1-based, as the CSV counts). */
  private static int addRows(IndexWriter w, CodeBlock codes, Magnitudes mags, List<Map<String, String>> meta, MetaCsv.Options o) {
    try {
      return w.add(codes, mags, meta);
    } catch (RowRefusal e) {
      throw new BadInputException(o.file() + ": data row " + (e.row() + 1) + ": " + e.detail(), e);
    }
  }

  /** Bits per kept magnitude of an open index (its build property; 0 = none kept). */
  public static int magnitudeBits(IndexReader r) {
    String v = r.properties().get(MAGNITUDES);
    if (v == null) return 0;
    try {
      int bits = Integer.parseInt(v);
      if (bits == 0 || Magnitudes.supported(bits)) return bits;
    } catch (NumberFormatException e) {
      // reported below
    }
    throw new BadInputException(r.dir() + ": index property " + MAGNITUDES + " is '" + v + "', expected 0, 2, 4 or 8");
  }

  /** The segments of {@code layout} named by {@code layers}, in that order (null or empty: all of them). */
  private static CodeLayout keptLayout(CodeLayout layout, List<String> layers) {
    if (layers == null || layers.isEmpty()) return layout;
    List<CodeLayout.Segment> segs = new ArrayList<>();
    for (int s : Layers.select(layout, layers)) segs.add(layout.segments().get(s));
    return new CodeLayout(segs);
  }

  /** The metadata rows, one per code of {@code codes} (whose width is the source's columns unless it is a model's inputs). */
  private static List<Map<String, String>> readMeta(MetaCsv.Options o, CodeBlock codes, Source source) {
    if (o == null) return null;
    List<Map<String, String>> meta = MetaCsv.read(o);
    int rows = codes.size(), cols = codes.layout().bits();
    if (meta.size() != rows)
      throw new BadInputException(o.file() + ": " + meta.size() + " data rows, but " + source.file() + " has " + rows + " rows"
          + (meta.size() == cols && source.kind() != Source.Kind.INPUTS ? " of " + cols + " columns (saved as units by examples? save it"
              + " transposed, a.T)" : ""));
    return meta;
  }

  private static void checkEmptyOrAbsent(Path dir) {
    OutputFiles.checkIndexPlace(dir, "`BuildParams.dir`");
    for (Path up = dir.toAbsolutePath().getParent(); up != null; up = up.getParent())
      if (Files.exists(up)) {
        if (!Files.isDirectory(up)) throw new BadInputException(dir + ": cannot make the index folder: " + up + " is a file, not a folder");
        break;
      }
    if (!Files.exists(dir)) return;
    if (!Files.isDirectory(dir)) throw new BadInputException(dir + ": exists and is not a folder");
    try (Stream<Path> s = Files.list(dir)) {
      if (s.findAny().isPresent())
        throw new BadInputException(dir + ": folder is not empty; build needs a new or empty folder" + (OutputFiles.holdsIndex(dir)
            ? " (it holds an index, or what an interrupted build left of one: 'add' grows an index; remove the folder to build anew)"
            : ""));
    } catch (IOException e) {
      throw new BadInputException(dir + ": cannot list: " + e.getMessage(), e);
    }
  }

  /** Removes what a failed build wrote; the folder was absent or empty before, so all of it is ours. */
  private static void removeBuilt(Path dir, boolean existed, Throwable failure) {
    if (!Files.exists(dir)) return;
    try (Stream<Path> walk = Files.walk(dir)) {
      for (Path f : walk.sorted(Comparator.reverseOrder()).toList())
        if (!existed || !f.equals(dir)) Files.delete(f);
    } catch (IOException e) {
      failure.addSuppressed(e);
    }
  }

  private static void deleteIfEmpty(Path dir) {
    try {
      Files.deleteIfExists(dir);
    } catch (IOException notEmptyOrGone) {
      // someone else's files: leave them
    }
  }

  private static byte[] readAll(Path file) {
    try {
      return Files.readAllBytes(file);
    } catch (IOException e) {
      throw new BadInputException(file + ": cannot read: " + e.getMessage(), e);
    }
  }

  private static int chunk(int rows) {
    return rows > 0 ? rows : Encoding.CHUNK;
  }

  private static Progress orNone(Progress p) {
    return p == null ? Progress.NONE : p;
  }
}
