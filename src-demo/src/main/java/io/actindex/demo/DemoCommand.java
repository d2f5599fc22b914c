package io.actindex.demo;

import io.actindex.cli.ExitCodes;
import io.actindex.cli.ExtraCommand;
import io.actindex.cli.Main;
import io.actindex.demo.VibrationScenario.Window;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.core.BadInputException;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.stream.Stream;
import picocli.CommandLine.Command;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code actindex demo}: the main job on invented data. Makes the vibration-sensor windows of
 * {@link VibrationScenario}, trains a small ReLU network on them, builds an index of every
 * labelled window with its metadata, then asks which past windows the network treats like a few
 * new ones, and prints the region census. It shows each command it runs, so the user can repeat
 * them on the files it leaves in the output folder.
 */
@Command(name = "demo", mixinStandardHelpOptions = true,
    description = {"Runs the main job on built-in invented data (vibration-sensor windows of three filler lines).",
        "Trains a small ReLU network, builds an index with metadata, runs nearest, region, census, dupes, ood, "
            + "compare and report on it, prints every command it ran so you can repeat them, and ends with what it "
            + "found against what it planted."})
public final class DemoCommand implements ExtraCommand {
  @Spec CommandSpec spec;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "actindex-demo",
      description = "Folder for the demo's files and index (new, empty, or an earlier demo's). Default: ${DEFAULT-VALUE}.")
  Path out;

  @Option(names = "--seed", paramLabel = "N", defaultValue = "2026", description = "Seed of the invented data and the training. Default: ${DEFAULT-VALUE}.")
  long seed;

  @Option(names = "--verbose", description = "On an internal error, print the full stack trace.")
  boolean verbose;

  /** Marks a folder as the demo's, so a rerun may replace what it made. */
  static final String MARKER = "ABOUT-THIS-DEMO.txt";

  static final int HIDDEN1 = 128, HIDDEN2 = 64, EPOCHS = 8, DUPES_RADIUS = 2;

  private double trainSeconds;

  @Option(names = "--size", paramLabel = "full|small", defaultValue = "full", hidden = true,
      description = "full: about 20,000 windows (default); small: a reduced set for tests.")
  String size;

  @Override
  public Integer call() throws IOException {
    PrintWriter o = spec.commandLine().getOut();
    VibrationScenario.Sizes sizes = switch (size) {
      case "full" -> VibrationScenario.Sizes.full();
      case "small" -> VibrationScenario.Sizes.small();
      default -> throw new BadInputException("--size: expected full or small, got " + size);
    };
    prepare(out);
    Findings findings = new Findings();
    long started = System.nanoTime();
    VibrationScenario.Plant plant = VibrationScenario.plant(sizes, seed);
    List<Window> history = plant.history();
    Files.writeString(out.resolve(MARKER), about(), StandardCharsets.UTF_8);
    features(file("windows.npy"), history);
    metadata(file("windows.csv"), history);
    features(file("calibration.npy"), plant.calibration());
    features(file("incoming.npy"), plant.incoming());
    features(file("incoming-ordinary.npy"), plant.incoming().stream().filter(w -> w.planted().isEmpty()).toList());
    features(file("incoming-odd.npy"), plant.incoming().stream().filter(w -> !w.planted().isEmpty()).toList());
    metadata(file("incoming-truth.csv"), plant.incoming());
    features(file("week47.npy"), plant.weekBefore());
    features(file("week48.npy"), plant.weekAfter());
    features(file("week47-first-half.npy"), plant.weekBeforeFirstHalf());
    features(file("week47-second-half.npy"), plant.weekBeforeSecondHalf());
    metadata(file("planted.csv"), history.stream().filter(w -> !w.planted().isEmpty()).toList());

    o.println("actindex demo: a bottling plant's vibration sensors (invented data, seed " + seed + ")");
    o.println("  " + history.size() + " labelled windows of " + VibrationScenario.FEATURES + " features from three filler lines over two "
        + "seasons (states: " + String.join(", ", VibrationScenario.STATES) + "; 80/20 train/test split), in " + file("windows.npy")
        + " with metadata in " + file("windows.csv"));
    o.println("  planted for the tool to find: " + count(history, VibrationScenario.RESENT) + " windows re-sent by a flaky logger, "
        + count(history, VibrationScenario.STUCK) + " from a stuck sensor, " + count(history, VibrationScenario.LEAKED)
        + " training windows copied into the test split, " + count(history, VibrationScenario.RELABELLED)
        + " windows labelled twice with different states (truth in planted.csv)");
    o.println("  also written: " + plant.calibration().size() + " fresh windows for calibration, " + plant.incoming().size()
        + " incoming windows (" + count(plant.incoming(), VibrationScenario.NEW_MACHINE) + " from a new capping machine, "
        + count(plant.incoming(), VibrationScenario.LOOSE_SENSOR) + " from a loose sensor; truth in incoming-truth.csv), and line L1's "
        + "weeks 47 and 48 (a bearing was changed in between)");

    Mlp mlp = train(history);
    mlp.save(file("model.safetensors"), Map.of("actindex.demo", "vibration states, seed " + seed));
    o.printf(Locale.ROOT, "  trained a ReLU network %d -> %d -> %d -> %d on the train split in %.1f s; accuracy on the test split %.1f%%%n",
        VibrationScenario.FEATURES, HIDDEN1, HIDDEN2, VibrationScenario.STATES.size(), trainSeconds,
        100 * accuracy(mlp, history, "test"));
    o.println("  its hidden layers '0' and '2' give " + (HIDDEN1 + HIDDEN2) + "-bit codes");
    o.flush();

    String index = file("index").toString(), incoming = file("incoming.npy").toString();
    int code = run(o, "Index every window's on/off code with its metadata:",
        "build", "--out", index, "--model", file("model.safetensors").toString(), "--inputs", file("windows.npy").toString(),
        "--meta", file("windows.csv").toString());
    if (code == 0) code = run(o, "Which past windows does the network treat like the first incoming ones?",
        "nearest", "--index", index, "--inputs", incoming, "--rows", "0:3", "-k", "5");
    if (code == 0) code = run(o, "The same, only among training windows from line L2:",
        "nearest", "--index", index, "--inputs", incoming, "--rows", "0:2", "-k", "3", "--where", "split = train and line = L2");
    int newMachineRow = plant.incoming().indexOf(plant.incoming().stream()
        .filter(w -> w.planted().equals(VibrationScenario.NEW_MACHINE)).findFirst().orElseThrow());
    if (code == 0) code = run(o, "The region of a window from the new capping machine, and the populated regions around it:",
        "region", "--index", index, "--inputs", incoming, "--rows", Integer.toString(newMachineRow), "--radius", "3");
    if (code == 0) code = run(o, "How the windows spread over the network's linear regions:",
        "census", "--index", index, "--largest", "3");
    if (code == 0) code = run(o, "Which windows does the network not tell apart (within " + DUPES_RADIUS + " flipped neurons)? Leaks across the split and label conflicts are flagged:",
        "dupes", "--index", index, "--radius", Integer.toString(DUPES_RADIUS), "--groups", "5", "--pairs", file("pairs.csv").toString());
    if (code == 0) findings.fromPairs(history, file("pairs.csv"), DUPES_RADIUS);
    if (code == 0) code = run(o, "Calibrate an out-of-distribution flag on fresh windows the index has not seen (95% of such windows pass):",
        "ood", "calibrate", "--index", index, "--inputs", file("calibration.npy").toString());
    int firstOdd = plant.incoming().size() - (int) (count(plant.incoming(), VibrationScenario.NEW_MACHINE)
        + count(plant.incoming(), VibrationScenario.LOOSE_SENSOR));
    if (code == 0) code = run(o, "Score incoming windows: two ordinary ones, then the first two from the new capping machine:",
        "ood", "score", "--index", index, "--inputs", incoming, "--rows", (firstOdd - 2) + ":" + (firstOdd + 2));
    if (code == 0) code = run(o, "How well does the flag separate ordinary incoming windows from the odd ones? (page: ood-eval.html)",
        "ood", "eval", "--index", index, "--in", file("incoming-ordinary.npy").toString(), "--out", file("incoming-odd.npy").toString(),
        "--html", file("ood-eval.html").toString());
    if (code == 0) code = oodFindings(index, plant.incoming(), findings);
    if (code == 0) code = run(o, "Has line L1 moved after its bearing change? Week 47 against week 48, as the network sees them:",
        "compare", "--index", index, "--kind", "inputs", "--a", file("week47.npy").toString(), "--b", file("week48.npy").toString());
    if (code == 0) code = run(o, "A page to look at (with the near-duplicates and the week 47 / 48 comparison):", "report", "--index", index,
        "--out", file("report.html").toString(), "--dupes-radius", Integer.toString(DUPES_RADIUS), "--compare-a", file("week47.npy").toString(),
        "--compare-b", file("week48.npy").toString());
    if (code == 0) code = drift(index, findings);
    if (code != 0) return code;
    o.println();
    o.println("What the demo planted, and what the commands above found:");
    o.println(String.format(Locale.ROOT, "  %-48s %5s / %-5s %s", "planted", "found", "of", "found as"));
    for (Findings.Line l : findings.lines()) o.println(l.render());
    o.println();
    o.printf(Locale.ROOT, "Done in %.0f s. Open %s in a browser; every command above can be rerun or varied on the files in %s.%n",
        (System.nanoTime() - started) / 1e9, file("report.html"), out);
    o.println("Note: label votes and distances are heuristics from neighbours in code space, not guarantees.");
    o.flush();
    return ExitCodes.OK;
  }

  /** The drift test, read back as JSON: week 47 against 48 (a real change) and the two halves of week 47 (none). */
  private int drift(String index, Findings findings) {
    double[] p = new double[2];
    String[][] pairs = {{"week47.npy", "week48.npy"}, {"week47-first-half.npy", "week47-second-half.npy"}};
    for (int i = 0; i < 2; i++) {
      Object doc = json("compare", "--index", index, "--kind", "inputs", "--a", file(pairs[i][0]).toString(), "--b",
          file(pairs[i][1]).toString(), "--format", "json");
      if (doc == null) return ExitCodes.INTERNAL;
      p[i] = 1;
      for (Object m : (List<?>) ((Map<?, ?>) doc).get("mmd")) p[i] = Math.min(p[i], ((Number) ((Map<?, ?>) m).get("p_value")).doubleValue());
    }
    findings.add("bearing change between weeks 47 and 48", p[0] <= 0.025 ? 1 : 0, 1,
        String.format(Locale.ROOT, "compare: smallest MMD p = %.4f; two halves of week 47: p = %.3f%s", p[0], p[1],
            p[1] <= 0.025 ? " (a false alarm)" : " (no alarm, as it should be)"));
    return ExitCodes.OK;
  }

  /** Which incoming windows the calibrated flag calls out, per planted kind, read back from {@code ood score}'s JSON. */
  private int oodFindings(String index, List<Window> incoming, Findings findings) {
    Object doc = json("ood", "score", "--index", index, "--inputs", file("incoming.npy").toString(), "--evidence", "0", "--format", "json");
    if (doc == null) return ExitCodes.INTERNAL;
    List<?> results = (List<?>) ((Map<?, ?>) doc).get("results");
    int[] out = new int[3], total = new int[3];
    List<String> kinds = List.of("", VibrationScenario.NEW_MACHINE, VibrationScenario.LOOSE_SENSOR);
    for (Object r : results) {
      Map<?, ?> m = (Map<?, ?>) r;
      int k = kinds.indexOf(incoming.get(((Number) m.get("query")).intValue()).planted());
      total[k]++;
      if ("out".equals(m.get("decision"))) out[k]++;
    }
    findings.add("new capping machine (out of distribution)", out[1], total[1], "flagged out by the calibrated threshold");
    findings.add("loose sensor (out of distribution)", out[2], total[2], "flagged out by the calibrated threshold");
    findings.add("ordinary incoming windows flagged (false alarms)", out[0], total[0], "about 5% expected at the calibrated rate");
    return ExitCodes.OK;
  }

  /**
   * Runs one command quietly and returns its JSON document; if it failed, null, with what it wrote
   * to stderr shown (its notes are not shown otherwise: they would come after the summary).
   */
  private Object json(String... args) {
    java.io.StringWriter buf = new java.io.StringWriter(), err = new java.io.StringWriter();
    int code = Main.run(new PrintWriter(buf), new PrintWriter(err), args);
    if (code == 0) return io.actindex.encode.io.Json.parse(buf.toString());
    spec.commandLine().getErr().print(err);
    spec.commandLine().getErr().flush();
    return null;
  }

  private Path file(String name) {
    return out.resolve(name);
  }

  private static long count(List<Window> windows, String planted) {
    return windows.stream().filter(w -> w.planted().equals(planted)).count();
  }

  /** Runs one actindex command in this process, after printing it. */
  private int run(PrintWriter o, String why, String... args) {
    o.println();
    o.println(why);
    o.println("$ actindex " + String.join(" ", quoted(args)));
    o.flush();
    return Main.run(o, spec.commandLine().getErr(), args);
  }

  private static List<String> quoted(String[] args) {
    List<String> out = new ArrayList<>();
    for (String a : args) out.add(a.matches("[A-Za-z0-9_./:=-]+") ? a : "'" + a.replace("'", "'\\''") + "'");
    return out;
  }

  /** An absent or empty folder, or one an earlier demo made (its files are replaced). */
  private static void prepare(Path dir) throws IOException {
    if (Files.exists(dir) && !Files.isDirectory(dir)) throw new BadInputException(dir + ": exists and is not a folder");
    if (Files.isDirectory(dir)) {
      boolean empty;
      try (Stream<Path> s = Files.list(dir)) {
        empty = s.findAny().isEmpty();
      }
      if (!empty && !Files.exists(dir.resolve(MARKER)))
        throw new BadInputException(dir + ": folder is not empty and was not made by the demo; choose another --out");
      if (!empty)
        try (Stream<Path> walk = Files.walk(dir)) {
          for (Path p : walk.sorted(Comparator.reverseOrder()).toList()) if (!p.equals(dir)) Files.delete(p);
        }
    }
    Files.createDirectories(dir);
  }

  private static void features(Path file, List<Window> windows) throws IOException {
    try (NpyWriter w = NpyWriter.create(file, NpyDtype.FLOAT32, VibrationScenario.FEATURES)) {
      for (Window win : windows) w.write(win.features(), 1);
      w.commit();
    }
  }

  private static void metadata(Path file, List<Window> windows) throws IOException {
    List<String> lines = new ArrayList<>(List.of("key,label,split,line,shift,week,season,planted,copy_of"));
    for (Window w : windows)
      lines.add(String.join(",", w.key(), w.label(), w.split(), w.line(), w.shift(), Integer.toString(w.week()), w.season(), w.planted(),
          w.copyOf()));
    Files.write(file, lines, StandardCharsets.UTF_8);
  }

  private Mlp train(List<Window> history) {
    List<double[]> x = new ArrayList<>();
    List<Integer> y = new ArrayList<>();
    for (Window w : history)
      if (w.split().equals("train")) {
        x.add(toDouble(w.features()));
        y.add(w.state());
      }
    long t0 = System.nanoTime();
    Mlp mlp = MlpTrainer.train(x.toArray(double[][]::new), y.stream().mapToInt(Integer::intValue).toArray(),
        VibrationScenario.STATES.size(), new MlpTrainer.Config(new int[] {HIDDEN1, HIDDEN2}, EPOCHS, 64, 2e-3, seed));
    trainSeconds = (System.nanoTime() - t0) / 1e9;
    return mlp;
  }

  /** Fraction of the windows of {@code split} whose state the network's largest output names. */
  static double accuracy(Mlp mlp, List<Window> windows, String split) {
    int right = 0, total = 0;
    for (Window w : windows) {
      if (!w.split().equals(split)) continue;
      double[] a = toDouble(w.features());
      List<Mlp.Layer> layers = mlp.layers();
      for (int l = 0; l < layers.size(); l++) {
        Mlp.Layer layer = layers.get(l);
        double[] z = layer.bias().clone();
        for (int r = 0; r < z.length; r++)
          for (int c = 0; c < a.length; c++) z[r] += layer.weight().get(r, c) * a[c];
        if (l < layers.size() - 1) for (int r = 0; r < z.length; r++) z[r] = Math.max(0, z[r]);
        a = z;
      }
      int best = 0;
      for (int c = 1; c < a.length; c++) if (a[c] > a[best]) best = c;
      if (best == w.state()) right++;
      total++;
    }
    return total == 0 ? 0 : right / (double) total;
  }

  private static double[] toDouble(float[] f) {
    double[] d = new double[f.length];
    for (int i = 0; i < f.length; i++) d[i] = f[i];
    return d;
  }

  private String about() {
    return """
        Made by 'actindex demo' (seed %d). Invented data, no real machines:
          windows.npy         labelled vibration windows, float32, one row per window, columns %s
          windows.csv         their metadata: key, label (machine state), split, line, shift, week, season,
                              planted (the problem planted in the row, empty for ordinary rows), copy_of
          planted.csv         the planted rows alone: the truth the demo checks its findings against
          calibration.npy     fresh in-distribution windows, for out-of-distribution calibration
          incoming.npy        new unlabelled windows; incoming-truth.csv says which came from the new
                              capping machine or the loose sensor; incoming-ordinary.npy and
                              incoming-odd.npy hold the two parts apart (for 'ood eval')
          pairs.csv           every near-duplicate pair 'dupes' found (id_a,id_b,distance)
          ood-eval.html       the page 'ood eval' wrote (ROC curve, score histograms)
          week47.npy, week48.npy  line L1 before and after a bearing change; week47-first-half.npy and
                              week47-second-half.npy split week 47 in two (a comparison that should find nothing)
          model.safetensors   the ReLU network trained on the train split
          index/              the actindex index built from the network's on/off codes
          report.html         the page 'actindex report' wrote about the index
        Running the demo again with this folder replaces these files.
        """.formatted(seed, String.join(",", VibrationScenario.FEATURE_NAMES));
  }
}
