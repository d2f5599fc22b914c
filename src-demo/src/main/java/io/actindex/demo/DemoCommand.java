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
    description = {"Runs the main job on built-in invented data (vibration-sensor windows of three filler lines):",
        "trains a small ReLU network, builds an index with metadata, prints neighbour tables and a census,",
        "and shows the commands it ran so you can repeat them."})
public final class DemoCommand implements ExtraCommand {
  @Spec CommandSpec spec;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "actindex-demo",
      description = "Folder for the demo's files and index (new, empty, or an earlier demo's). Default: ${DEFAULT-VALUE}.")
  Path out;

  @Option(names = "--seed", paramLabel = "N", defaultValue = "2026", description = "Seed of the invented data and the training.")
  long seed;

  @Option(names = "--verbose", description = "On an internal error, print the full stack trace.")
  boolean verbose;

  /** Marks a folder as the demo's, so a rerun may replace what it made. */
  static final String MARKER = "ABOUT-THIS-DEMO.txt";

  static final int HIDDEN1 = 8, HIDDEN2 = 6;

  @Override
  public Integer call() throws IOException {
    PrintWriter o = spec.commandLine().getOut();
    prepare(out);
    List<Window> history = VibrationScenario.windows(1200, 0.2, "w", seed);
    List<Window> incoming = new ArrayList<>(VibrationScenario.windows(5, 0, "new", seed + 1));
    incoming.add(VibrationScenario.oddWindow("new-odd", seed + 2));

    Path historyNpy = out.resolve("windows.npy"), historyCsv = out.resolve("windows.csv");
    Path incomingNpy = out.resolve("incoming.npy"), model = out.resolve("model.safetensors"), index = out.resolve("index");
    features(historyNpy, history);
    metadata(historyCsv, history);
    features(incomingNpy, incoming);
    Files.writeString(out.resolve(MARKER), about(), StandardCharsets.UTF_8);

    o.println("actindex demo: a bottling plant's vibration sensors (invented data, seed " + seed + ")");
    o.println("  " + history.size() + " labelled windows of " + VibrationScenario.FEATURES + " features "
        + "(states: " + String.join(", ", VibrationScenario.STATES) + "; lines L1-L3; day/night shift; 80/20 train/test split)");
    o.println("  written to " + historyNpy + " and " + historyCsv + "; " + incoming.size() + " new unlabelled windows in " + incomingNpy);

    Mlp mlp = train(history);
    mlp.save(model, Map.of("actindex.demo", "vibration states, seed " + seed));
    o.printf(Locale.ROOT, "  trained a ReLU network %d -> %d -> %d -> %d on the train split; accuracy on the test split %.1f%%%n",
        VibrationScenario.FEATURES, HIDDEN1, HIDDEN2, VibrationScenario.STATES.size(), 100 * accuracy(mlp, history, "test"));
    o.println("  saved to " + model + " (safetensors; hidden layers '0' and '2' give the codes)");
    o.flush();

    int code = run(o, "Index every window's on/off code with its metadata:",
        "build", "--out", index.toString(), "--model", model.toString(), "--inputs", historyNpy.toString(), "--meta", historyCsv.toString());
    if (code == 0) code = run(o, "Which past windows does the network treat like the new ones? (the last one is a loose sensor)",
        "nearest", "--index", index.toString(), "--inputs", incomingNpy.toString(), "-k", "5");
    if (code == 0) {
      List<String> truth = new ArrayList<>();
      for (int i = 0; i < incoming.size(); i++) truth.add("row " + i + " " + incoming.get(i).label());
      o.println();
      o.println("(The demo knows the new windows' real states, which the index never saw: " + String.join(", ", truth) + ".");
      o.println(" A vote is given even for the loose sensor: compare its nearest distance with the others'. A vote is not");
      o.println(" an out-of-distribution check.)");
    }
    if (code == 0) code = run(o, "The same, only among training windows from line L2:",
        "nearest", "--index", index.toString(), "--inputs", incomingNpy.toString(), "--rows", "0:2", "-k", "3",
        "--where", "split = train and line = L2");
    if (code == 0) code = run(o, "How the windows spread over the network's linear regions:",
        "census", "--index", index.toString(), "--largest", "3");
    if (code != 0) return code;
    o.println();
    o.println("Next: 'actindex region --index " + index + " --inputs " + incomingNpy + " --rows 5 --radius 3' shows the odd");
    o.println("window's region and its populated neighbours; add '--format json' to any query for scripts.");
    o.println("Note: the label vote is a heuristic from neighbours in code space, not a calibrated guarantee.");
    o.flush();
    return ExitCodes.OK;
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
    List<String> lines = new ArrayList<>(List.of("key,label,split,line,shift"));
    for (Window w : windows) lines.add(String.join(",", w.key(), w.label(), w.split(), w.line(), w.shift()));
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
    return MlpTrainer.train(x.toArray(double[][]::new), y.stream().mapToInt(Integer::intValue).toArray(),
        VibrationScenario.STATES.size(), new MlpTrainer.Config(new int[] {HIDDEN1, HIDDEN2}, 40, 32, 3e-3, seed));
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
          windows.npy        labelled vibration windows, float32, one row per window, columns %s
          windows.csv        their metadata: key, label (machine state), split, line, shift
          incoming.npy       new unlabelled windows to look up (the last one is a loose sensor)
          model.safetensors  the small ReLU network trained on the train split
          index/             the actindex index built from the network's on/off codes
        Running the demo again with this folder replaces these files.
        """.formatted(seed, String.join(",", VibrationScenario.FEATURE_NAMES));
  }
}
