package io.actindex.encode;

import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.Json;
import io.actindex.encode.io.SafetensorsReader;
import io.actindex.encode.mlp.LayerOrder;
import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.io.NpyReader;
import io.actindex.encode.io.NpzReader;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.io.NpzWriter;
import io.actindex.encode.mlp.Mlp;
import io.actindex.core.BadInputException;
import io.actindex.core.OutputFiles;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeLayout;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * Entry points from files to {@link CodeStream}s, and the index properties that let queries be
 * encoded exactly like the build. File type is chosen by extension: {@code .npy}, {@code .npz},
 * {@code .csv}; {@code .safetensors} for models.
 */
public final class Encoders {
  private Encoders() {}

  /** Property keys written by {@link #describe}. */
  public static final String RULE = "encode.rule", THRESHOLD = "encode.threshold", LAYERS = "encode.layers", MEDIAN_PREFIX = "encode.median.",
      LAYER_ORDER = "encode.model.order", OUTPUT_LAYER = "encode.model.output";

  /** Default segment name of a single-matrix activations file. */
  public static final String DEFAULT_LAYER = "act";

  /**
   * Activations: {@code .npy} or {@code .csv} (one layer, named {@code o.layers().get(0)} if
   * given, else {@code "act"}), or {@code .npz} (one member per layer, in {@code o.layers()}
   * order, else archive order).
   */
  public static CodeStream activations(Path file, EncodeOptions o) throws IOException {
    return activations(file, o, CsvMatrixReader.Header.AUTO);
  }

  /** As {@link #activations(Path, EncodeOptions)}; {@code header} says whether a CSV file's first line is a header. */
  public static CodeStream activations(Path file, EncodeOptions o, CsvMatrixReader.Header header) throws IOException {
    String ext = extension(file);
    checkReadable(file);
    LayerSource.Opener opener = switch (ext) {
      case "npy", "csv" -> {
        if (o.layers() != null && o.layers().size() != 1)
          throw new BadInputException(file + ": a single ." + ext + " matrix is one layer, but layers " + o.layers() + " were asked for");
        String name = o.layers() == null ? DEFAULT_LAYER : o.layers().getFirst();
        yield () -> {
          MatrixReader r = openMatrix(file, header);
          return new LayerSource.Readers(file.toString(), List.of(name), List.of(r), null);
        };
      }
      case "npz" -> () -> {
        NpzReader z = NpzReader.open(file);
        List<MatrixReader> readers = new ArrayList<>();
        try {
          List<String> names = o.layers() == null ? z.names() : o.layers();
          for (String n : names) readers.add(z.member(n));
          return new LayerSource.Readers(file.toString(), names, readers, z);
        } catch (RuntimeException | IOException e) {
          for (MatrixReader r : readers) r.close();
          z.close();
          throw e;
        }
      };
      default -> throw new BadInputException(file + ": unknown activations file type '." + ext + "' (expected .npy, .npz or .csv)");
    };
    return new ActivationCodeStream(opener, o);
  }

  /** Pre-binarized codes (see {@link CodeFiles}); {@code layoutOrNull} null = one segment "code". */
  public static CodeStream codes(Path file, CodeLayout layoutOrNull) throws IOException {
    checkReadable(file);
    if (!extension(file).equals("npy")) throw new BadInputException(file + ": codes must be a .npy file");
    return CodeFiles.read(file, layoutOrNull);
  }

  /**
   * The codes of every hidden layer of the MLP in {@code safetensors} run on the rows of {@code
   * inputs} ({@code .npy} or {@code .csv}). The layer order is {@code o.layerOrder()}, or decided
   * from the names and shapes ({@link LayerOrder}; the width of the inputs breaks ties the shapes
   * leave); {@code o.outputLayer()} says whether the last layer is an output layer (not encoded);
   * {@code o.layers()} selects hidden layers by name. The stream's {@link CodeStream#options()}
   * carry the order used, its {@link CodeStream#notes()} say which layers were encoded.
   */
  public static CodeStream model(Path safetensors, Path inputs, EncodeOptions o) throws IOException {
    return model(safetensors, inputs, o, CsvMatrixReader.Header.AUTO);
  }

  /** As {@link #model(Path, Path, EncodeOptions)}; {@code header} says whether a CSV file's first line is a header. */
  public static CodeStream model(Path safetensors, Path inputs, EncodeOptions o, CsvMatrixReader.Header header) throws IOException {
    checkReadable(safetensors);
    if (o.rule() == BinarizeRule.THRESHOLD && o.threshold() < 0)
      throw new BadInputException(safetensors + ": threshold " + o.threshold() + " is below 0, but a model's hidden activations are taken after ReLU"
          + " (0 or more), so every neuron would be on in every row; give a threshold of 0 or more, or pass activations before ReLU with `Source.activations`");
    try (SafetensorsReader r = SafetensorsReader.open(safetensors)) {
      return model(r, inputs, o, header);
    }
  }

  /**
   * As {@link #model(Path, Path, EncodeOptions)} for a model held in memory (e.g. stored in an
   * index); {@code modelName} names it in messages.
   */
  public static CodeStream model(String modelName, byte[] safetensors, Path inputs, EncodeOptions o, CsvMatrixReader.Header header)
      throws IOException {
    try (SafetensorsReader r = SafetensorsReader.open(modelName, safetensors)) {
      return model(r, inputs, o, header);
    }
  }

  private static CodeStream model(SafetensorsReader r, Path inputs, EncodeOptions o, CsvMatrixReader.Header header) throws IOException {
    checkReadable(inputs);
    int width;
    try (MatrixReader m = openMatrix(inputs, header)) {
      width = m.cols();
    }
    Mlp.Loaded loaded = Mlp.load(r, o.layerOrder(), o.outputLayer(), width);
    Mlp mlp = loaded.mlp();
    EncodeOptions used = o.withModel(mlp.layers().stream().map(Mlp.Layer::name).toList(), o.outputLayer());
    String note = modelNote(r.file(), loaded, o.layers());
    return new ActivationCodeStream(() -> {
      MatrixReader in = openMatrix(inputs, header);
      try {
        return new ModelLayers(mlp, r.file(), in, o.layers(), note);
      } catch (RuntimeException e) {
        in.close();
        throw e;
      }
    }, used);
  }

  /**
   * One line: the layer order and where it came from, the code layers (those kept, when {@code
   * kept} names some) and the output layer.
   */
  static String modelNote(String file, Mlp.Loaded m, List<String> kept) {
    List<String> order = m.mlp().layers().stream().map(Mlp.Layer::name).toList();
    String from = switch (m.orderFrom()) {
      case OPTION -> "as given";
      case NAMES -> "from the numbers in the names";
      case SHAPES -> "from the weight shapes, the only order that chains";
    };
    String out = m.mlp().outputLayer();
    List<String> hidden = m.mlp().hiddenNames();
    String codes = kept == null || kept.equals(hidden) ? "code layers " + String.join(", ", hidden)
        : "hidden layers " + String.join(", ", hidden) + ", kept as code layers " + String.join(", ", kept);
    return file + ": layer order " + String.join(", ", order) + " (" + from + "); " + codes
        + (out == null ? "; no output layer (every layer is a code layer)" : "; output layer " + out + " (not encoded)")
        + (m.withoutBias().isEmpty() ? "" : "; note: " + String.join(", ", m.withoutBias()) + (m.withoutBias().size() == 1 ? " has" : " have")
            + " no .bias tensor (taken as 0) though the other layers have one: check that none was left out when saving");
  }

  /** As {@link #model(Path, Path, EncodeOptions)} for a loaded model. */
  public static CodeStream model(Mlp mlp, String modelName, Path inputs, EncodeOptions o) throws IOException {
    checkReadable(inputs);
    return new ActivationCodeStream(() -> {
      MatrixReader r = openMatrix(inputs);
      try {
        return new ModelLayers(mlp, modelName, r, o.layers(), null);
      } catch (RuntimeException e) {
        r.close();
        throw e;
      }
    }, o);
  }

  /** As {@link #model(Path, Path, EncodeOptions)} for rows already in memory (single queries). */
  public static CodeStream model(Mlp mlp, String modelName, MatrixReader.Factory inputs, EncodeOptions o) throws IOException {
    return new ActivationCodeStream(() -> {
      MatrixReader r = inputs.open();
      try {
        return new ModelLayers(mlp, modelName, r, o.layers(), null);
      } catch (RuntimeException e) {
        r.close();
        throw e;
      }
    }, o);
  }

  /** As {@link #activations(Path, EncodeOptions)} for one layer read from any matrix (e.g. rows in memory). */
  public static CodeStream activations(MatrixReader.Factory matrix, String layer, EncodeOptions o) throws IOException {
    return new ActivationCodeStream(() -> {
      MatrixReader r = matrix.open();
      return new LayerSource.Readers(r.source(), List.of(layer), List.of(r), null);
    }, o);
  }

  /**
   * Every remaining code of {@code s} in one block (for inputs that fit in memory: queries, tests);
   * null if none remain.
   */
  public static CodeBlock readAll(CodeStream s) throws IOException {
    int words = s.layout().words();
    long[] all = new long[0];
    int n = 0;
    CodeBlock b;
    while ((b = s.next(65536)) != null) {
      if ((long) (n + b.size()) * words > Integer.MAX_VALUE - 8) throw new IllegalStateException("too many codes for one block");
      if ((n + b.size()) * words > all.length) all = Arrays.copyOf(all, Math.max((n + b.size()) * words, all.length * 2));
      System.arraycopy(b.words(), 0, all, n * words, b.size() * words);
      n += b.size();
    }
    return n == 0 ? null : new CodeBlock(s.layout(), n, Arrays.copyOf(all, n * words));
  }

  /**
   * Exports the float activations of the model's hidden layers ({@code layers} selects them, null =
   * all) on the rows of {@code inputs}: an {@code .npz} with one float32 member per layer, or a
   * float32 {@code .npy} when {@code out} ends in {@code .npy} and one layer is exported. Atomic.
   * Returns the rows written.
   */
  public static long exportActivations(Mlp mlp, String modelName, Path inputs, List<String> layers, Path out) throws IOException {
    checkReadable(inputs);
    OutputFiles.checkTarget(out, "`out`", new OutputFiles.Input("`inputs`", inputs));
    boolean npy = extension(out).equals("npy");
    try (MatrixReader r = openMatrix(inputs)) {
      ModelLayers src = new ModelLayers(mlp, modelName, r, layers, null);
      List<String> names = src.names();
      int[] widths = src.widths();
      if (npy && names.size() != 1)
        throw new BadInputException(out + ": a .npy file holds one layer; export " + names + " to an .npz file");
      NpzWriter zip = npy ? null : NpzWriter.create(out);
      NpyWriter single = npy ? NpyWriter.create(out, NpyDtype.FLOAT32, widths[0]) : null;
      try {
        NpyWriter[] w = new NpyWriter[names.size()];
        for (int i = 0; i < w.length; i++) w[i] = npy ? single : zip.member(names.get(i), NpyDtype.FLOAT32, widths[i]);
        double[][] d = new double[names.size()][];
        long rows = 0;
        int m;
        while ((m = src.read(4096, null, d)) > 0) {
          for (int i = 0; i < w.length; i++) w[i].write(d[i], m);
          rows += m;
        }
        if (npy) single.commit();
        else zip.commit();
        return rows;
      } finally {
        if (zip != null) zip.close();
        if (single != null) single.close();
      }
    }
  }

  /** Opens a {@code .npy} or {@code .csv} matrix (a CSV header detected, see {@link CsvMatrixReader}). */
  public static MatrixReader openMatrix(Path file) throws IOException {
    return openMatrix(file, CsvMatrixReader.Header.AUTO);
  }

  /** Opens a {@code .npy} or {@code .csv} matrix; {@code header} says whether a CSV file's first line is a header. */
  public static MatrixReader openMatrix(Path file, CsvMatrixReader.Header header) throws IOException {
    checkReadable(file);
    return switch (extension(file)) {
      case "npy" -> NpyReader.open(file);
      case "csv" -> CsvMatrixReader.open(file, header);
      default -> throw new BadInputException(file + ": unknown matrix file type (expected .npy or .csv)");
    };
  }

  private static void checkReadable(Path file) {
    if (Files.isDirectory(file)) throw new BadInputException(file + ": is a folder, not a file");
    if (!Files.exists(file)) throw new BadInputException(file + ": no such file");
    if (!Files.isRegularFile(file))
      throw new BadInputException(file + ": not a regular file (a device or a pipe); save the data to a file first");
    if (!Files.isReadable(file)) throw new BadInputException(file + ": not readable");
  }

  private static String extension(Path file) {
    String n = file.getFileName().toString();
    int dot = n.lastIndexOf('.');
    return dot < 0 ? "" : n.substring(dot + 1).toLowerCase(Locale.ROOT);
  }

  /**
   * Properties that reproduce {@code o}: rule, threshold, layers and (for MEDIAN) every median,
   * written with {@link Double#toString} so they read back exactly.
   */
  public static Map<String, String> describe(EncodeOptions o) {
    Map<String, String> p = new LinkedHashMap<>();
    p.put(RULE, o.rule().name().toLowerCase(Locale.ROOT));
    if (o.rule() == BinarizeRule.THRESHOLD) p.put(THRESHOLD, Double.toString(o.threshold()));
    if (o.layers() != null) p.put(LAYERS, String.join(",", o.layers()));
    if (o.layerOrder() != null) p.put(LAYER_ORDER, Json.quote(o.layerOrder()));
    if (!o.outputLayer()) p.put(OUTPUT_LAYER, "false");
    if (o.rule() == BinarizeRule.MEDIAN) {
      if (o.medians() == null) throw new IllegalArgumentException("MEDIAN options without medians: describe the stream's options() after building");
      for (var e : o.medians().entrySet()) {
        StringBuilder sb = new StringBuilder();
        for (double v : e.getValue()) sb.append(sb.isEmpty() ? "" : ",").append(v);
        p.put(MEDIAN_PREFIX + e.getKey(), sb.toString());
      }
    }
    return p;
  }

  /** The options {@link #describe} wrote; BadInputException naming the property if malformed. */
  public static EncodeOptions fromProperties(Map<String, String> props) {
    String r = props.get(RULE);
    if (r == null) r = "positive";
    BinarizeRule rule = switch (r) {
      case "positive" -> BinarizeRule.POSITIVE;
      case "threshold" -> BinarizeRule.THRESHOLD;
      case "median" -> BinarizeRule.MEDIAN;
      default -> throw new BadInputException("index property " + RULE + ": unknown rule '" + r + "'");
    };
    double t = 0;
    if (rule == BinarizeRule.THRESHOLD) t = parse(props.get(THRESHOLD), THRESHOLD);
    String l = props.get(LAYERS);
    List<String> layers = l == null || l.isEmpty() ? null : Arrays.asList(l.split(","));
    Map<String, double[]> medians = null;
    if (rule == BinarizeRule.MEDIAN) {
      medians = new LinkedHashMap<>();
      for (var e : props.entrySet()) {
        if (!e.getKey().startsWith(MEDIAN_PREFIX)) continue;
        String[] parts = e.getValue().split(",");
        double[] v = new double[parts.length];
        for (int i = 0; i < v.length; i++) v[i] = parse(parts[i], e.getKey() + "[" + i + "]");
        medians.put(e.getKey().substring(MEDIAN_PREFIX.length()), v);
      }
      if (medians.isEmpty()) throw new BadInputException("index properties: rule median but no " + MEDIAN_PREFIX + "* property");
    }
    List<String> order = null;
    if (props.get(LAYER_ORDER) != null) {
      try {
        if (!(Json.parse(props.get(LAYER_ORDER)) instanceof List<?> names) || !names.stream().allMatch(String.class::isInstance))
          throw new IllegalArgumentException("not a list of names");
        order = names.stream().map(String.class::cast).toList();
      } catch (IllegalArgumentException e) {
        throw new BadInputException("index property " + LAYER_ORDER + ": " + e.getMessage());
      }
    }
    String output = props.getOrDefault(OUTPUT_LAYER, "true");
    if (!output.equals("true") && !output.equals("false"))
      throw new BadInputException("index property " + OUTPUT_LAYER + ": " + BadInputException.quote(output) + " is not true or false");
    return new EncodeOptions(rule, t, layers, medians, order, output.equals("true"));
  }

  private static double parse(String v, String field) {
    try {
      double d = Double.parseDouble(v);
      if (Double.isFinite(d)) return d;
    } catch (NumberFormatException | NullPointerException e) {
      // fall through
    }
    throw new BadInputException("index property " + field + ": '" + v + "' is not a finite number");
  }
}
