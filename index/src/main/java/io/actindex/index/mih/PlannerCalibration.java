package io.actindex.index.mih;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.OutputFiles;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.nio.file.attribute.FileTime;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Optional;

/**
 * This machine's planner costs, measured on request and kept in a small text file that every index
 * opened or built on the machine then plans with, in place of the costs each index stored when it
 * was built (measured in a fraction of a second under whatever load there was then, on whatever
 * machine built it). Several measurements ({@link PlannerCosts#measure()}) give each cost as their
 * median. Costs only choose which exact path answers a query: answers never depend on them.
 *
 * <p>The file: {@code -Dactindex.planner.costs=FILE}, else the environment variable {@code
 * ACTINDEX_PLANNER_COSTS}, else {@code $XDG_CONFIG_HOME/actindex/planner-costs.properties}
 * ({@code ~/.config} when unset). Lines {@code name=value} in nanoseconds, {@code #} comments, a
 * {@code format=1} line; every cost of {@link #NAMES} once. A file that does not parse is refused
 * with its name and line ({@link BadInputException}); a missing file means "not calibrated".
 */
public final class PlannerCalibration {
  private PlannerCalibration() {}

  public static final String PROPERTY = "actindex.planner.costs", ENV = "ACTINDEX_PLANNER_COSTS";
  /** The costs in {@link PlannerCosts#toArray()} order, as the file names them. */
  static final List<String> NAMES = List.of("scan-per-code", "scan-per-word", "probe-dense", "probe-sparse", "candidate", "walk",
      "partition-code", "candidate-far");
  private static final String FORMAT = "format=1";

  /** One cost: its name, the median of the runs in ns, and its largest over its smallest run. */
  public record Cost(String name, double ns, double spread) {}

  /** The costs of a calibration and how many measurements they are the median of. */
  public record Result(List<Cost> costs, int runs) {
    PlannerCosts planner() {
      return PlannerCosts.of(costs.stream().mapToDouble(Cost::ns).toArray());
    }
  }

  /** Where this machine's costs are kept (see the class comment). */
  public static Path file() {
    String p = System.getProperty(PROPERTY);
    if (p == null || p.isBlank()) p = System.getenv(ENV);
    if (p != null && !p.isBlank()) return Path.of(p);
    String config = System.getenv("XDG_CONFIG_HOME");
    Path base = config != null && !config.isBlank() ? Path.of(config) : Path.of(System.getProperty("user.home"), ".config");
    return base.resolve("actindex").resolve("planner-costs.properties");
  }

  /** Measures the costs {@code runs} times (about 0.2 s each) and takes each one's median. */
  public static Result calibrate(int runs) {
    if (runs < 1) throw new BadParameterException("runs", " must be at least 1, got " + runs);
    double[][] all = new double[NAMES.size()][runs];
    for (int r = 0; r < runs; r++) {
      double[] c = PlannerCosts.measure().toArray();
      for (int i = 0; i < c.length; i++) all[i][r] = c[i];
    }
    List<Cost> costs = new ArrayList<>();
    for (int i = 0; i < all.length; i++) {
      double[] x = all[i].clone();
      Arrays.sort(x);
      double median = runs % 2 == 1 ? x[runs / 2] : (x[runs / 2 - 1] + x[runs / 2]) / 2;
      costs.add(new Cost(NAMES.get(i), median, x[runs - 1] / x[0]));
    }
    return new Result(List.copyOf(costs), runs);
  }

  /**
   * Refuses a costs file that is a folder or lies in an index folder. {@link #write} checks it too;
   * a caller asks first so that a refusal does not come after the measuring.
   */
  public static void checkTarget(Path file) {
    if (Files.isDirectory(file)) throw new BadInputException(file + ": is a folder; the costs go in a file");
    OutputFiles.checkOutsideIndex(file, "the costs");
  }

  /**
   * Writes {@code r} to {@code file} whole or not at all ({@link OutputFiles#write}: its folders made
   * first), then removes the stale temporary files earlier versions left beside it ({@link
   * OutputFiles#removeStaleCreateTempFiles}).
   */
  public static void write(Result r, Path file) throws IOException {
    StringBuilder s = new StringBuilder();
    s.append("# actindex planner costs in ns: the median of ").append(r.runs()).append(" measurements, ")
        .append(Instant.now().truncatedTo(ChronoUnit.SECONDS)).append(", ").append(Runtime.getRuntime().availableProcessors())
        .append(" cores, ").append(System.getProperty("os.arch")).append(", Java ").append(Runtime.version()).append('\n');
    s.append("# written by 'actindex calibrate-planner'; delete the file to go back to the costs each index stored\n");
    s.append(FORMAT).append('\n');
    for (Cost c : r.costs()) s.append(c.name()).append('=').append(String.format(Locale.ROOT, "%.6g", c.ns())).append('\n');
    checkTarget(file);
    Files.createDirectories(file.toAbsolutePath().getParent());
    OutputFiles.write(file, s.toString().getBytes(StandardCharsets.UTF_8), "the costs");
    OutputFiles.removeStaleCreateTempFiles(file);
  }

  /** The costs in {@code file}, or empty when there is no such file. */
  static Optional<PlannerCosts> read(Path file) {
    List<String> lines;
    try {
      lines = Files.readAllLines(file, StandardCharsets.UTF_8);
    } catch (NoSuchFileException e) {
      return Optional.empty();
    } catch (IOException | java.io.UncheckedIOException e) {
      throw new BadCosts("planner costs " + file + ": cannot be read (" + e.getMessage() + ")", e);
    }
    double[] c = new double[NAMES.size()];
    Arrays.fill(c, Double.NaN);
    boolean format = false;
    for (int i = 0; i < lines.size(); i++) {
      String line = lines.get(i).strip();
      if (line.isEmpty() || line.startsWith("#")) continue;
      String where = "planner costs " + file + ": line " + (i + 1) + ": ";
      if (line.startsWith("format=")) {
        if (!line.equals(FORMAT)) throw bad(where + "'" + prefix(line) + "' is not a format this version reads (" + FORMAT + ")");
        format = true;
        continue;
      }
      int eq = line.indexOf('=');
      int at = eq < 0 ? -1 : NAMES.indexOf(line.substring(0, eq).strip());
      if (at < 0) throw bad(where + "'" + prefix(line) + "' is not name=value with a name of " + String.join(", ", NAMES));
      if (!Double.isNaN(c[at])) throw bad(where + NAMES.get(at) + " appears twice");
      try {
        c[at] = Double.parseDouble(line.substring(eq + 1).strip());
      } catch (NumberFormatException e) {
        throw bad(where + NAMES.get(at) + " '" + prefix(line.substring(eq + 1).strip()) + "' is not a number");
      }
      if (!(c[at] > 0 && c[at] < 1e6)) throw bad(where + NAMES.get(at) + " " + c[at] + " is outside (0, 1e6) ns");
    }
    String where = "planner costs " + file + ": ";
    if (!format) throw bad(where + "no '" + FORMAT + "' line (not a file 'actindex calibrate-planner' wrote?)");
    for (int i = 0; i < c.length; i++) if (Double.isNaN(c[i])) throw bad(where + NAMES.get(i) + " is missing");
    return Optional.of(PlannerCosts.of(c));
  }

  private static volatile Object[] cache; // {path, modified time, costs or null}

  /**
   * This machine's calibrated costs from {@link #file()}, or empty when it does not exist; read
   * again only when the file (or the place it is looked for) changes.
   */
  static Optional<PlannerCosts> current() {
    Path f = file();
    FileTime modified;
    try {
      modified = Files.getLastModifiedTime(f);
    } catch (IOException e) {
      modified = null; // no such file (or unreadable: read says which)
    }
    Object[] c = cache;
    if (c != null && c[0].equals(f) && java.util.Objects.equals(c[1], modified)) return Optional.ofNullable((PlannerCosts) c[2]);
    Optional<PlannerCosts> costs = modified == null && !Files.exists(f) ? Optional.empty() : read(f);
    cache = new Object[] {f, modified, costs.orElse(null)};
    return costs;
  }

  /** Whether this machine has a calibration ({@link #file()} exists and parses). */
  public static boolean calibrated() {
    return current().isPresent();
  }

  private static String prefix(String s) {
    return s.length() <= 40 ? s : s.substring(0, 40) + "...";
  }

  private static BadInputException bad(String message) {
    return new BadCosts(message + " (run 'actindex calibrate-planner' again, or delete the file)", null);
  }

  /** A refused costs file: its own type, so that a reader of index files does not report it as theirs. */
  public static final class BadCosts extends BadInputException {
    BadCosts(String message, Throwable cause) {
      super(message, cause);
    }
  }
}
