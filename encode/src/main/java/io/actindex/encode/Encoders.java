package io.actindex.encode;

import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.encode.io.MatrixReader;
import io.actindex.encode.io.NpyReader;
import io.actindex.encode.io.NpzReader;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.io.NpzWriter;
import io.actindex.encode.mlp.Mlp;
import io.actindex.core.BadInputException;
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
  public static final String RULE = "encode.rule", THRESHOLD = "encode.threshold", LAYERS = "encode.layers", MEDIAN_PREFIX = "encode.median.";

  /** Default segment name of a single-matrix activations file. */
  public static final String DEFAULT_LAYER = "act";

  /**
   * Activations: {@code .npy} or {@code .csv} (one layer, named {@code o.layers().get(0)} if
   * given, else {@code "act"}), or {@code .npz} (one member per layer, in {@code o.layers()}
   * order, else archive order).
   */
  public static CodeStream activations(Path file, EncodeOptions o) throws IOException {
    String ext = extension(file);
    checkReadable(file);
    LayerSource.Opener opener = switch (ext) {
      case "npy", "csv" -> {
        if (o.layers() != null && o.layers().size() != 1)
          throw new BadInputException(file + ": a single ." + ext + " matrix is one layer, but layers " + o.layers() + " were asked for");
        String name = o.layers() == null ? DEFAULT_LAYER : o.layers().getFirst();
        yield () -> {
          MatrixReader r = openMatrix(file);
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
   * The codes of every hidden layer of the MLP in {@code safetensors} (default layer order, see
   * {@link Mlp}) run on the rows of {@code inputs} ({@code .npy} or {@code .csv}); {@code
   * o.layers()} selects hidden layers by name.
   */
  public static CodeStream model(Path safetensors, Path inputs, EncodeOptions o) throws IOException {
    checkReadable(safetensors);
    return model(Mlp.load(safetensors, null), safetensors.toString(), inputs, o);
  }

  /** As {@link #model(Path, Path, EncodeOptions)} for a loaded model. */
  public static CodeStream model(Mlp mlp, String modelName, Path inputs, EncodeOptions o) throws IOException {
    checkReadable(inputs);
    return new ActivationCodeStream(() -> {
      MatrixReader r = openMatrix(inputs);
      try {
        return new ModelLayers(mlp, modelName, r, o.layers());
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
        return new ModelLayers(mlp, modelName, r, o.layers());
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
    boolean npy = extension(out).equals("npy");
    try (MatrixReader r = openMatrix(inputs)) {
      ModelLayers src = new ModelLayers(mlp, modelName, r, layers);
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

  /** Opens a {@code .npy} or {@code .csv} matrix. */
  public static MatrixReader openMatrix(Path file) throws IOException {
    checkReadable(file);
    return switch (extension(file)) {
      case "npy" -> NpyReader.open(file);
      case "csv" -> CsvMatrixReader.open(file);
      default -> throw new BadInputException(file + ": unknown matrix file type (expected .npy or .csv)");
    };
  }

  private static void checkReadable(Path file) {
    if (!Files.isRegularFile(file)) throw new BadInputException(file + ": no such file");
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
    if (r == null) return EncodeOptions.positive();
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
    return new EncodeOptions(rule, t, layers, medians);
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
