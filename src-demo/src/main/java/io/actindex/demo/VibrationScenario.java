package io.actindex.demo;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * The demo's invented data (no real dataset): a bottling plant's three filler lines carry
 * vibration sensors; every two-second window of signal is summarised into {@link #FEATURES}
 * numbers, and a technician has labelled each window with the machine's state. All numbers come
 * from a seeded generator, so every run produces the same windows.
 *
 * <p>Features: RMS level in eight frequency bands (log scale), crest factor, kurtosis, the
 * dominant frequency relative to shaft speed, shaft speed, bearing temperature, and three
 * harmonics ratios. Each state shifts a few of them; lines differ slightly (mounting), the night
 * shift runs a little faster and summer runs warmer.
 *
 * <p>{@link #plant} builds the history the index holds, with problems planted in it whose truth the
 * demo knows (windows re-sent by a flaky logger, a stuck sensor, windows copied across the
 * train/test split, windows labelled twice with different states), and the sets the demo asks
 * about: fresh windows for calibration, a batch of new windows mixed with two kinds the network
 * never saw (a capping machine on a new line and a loose sensor), and the weeks before and after a
 * bearing change on line L1.
 */
public final class VibrationScenario {
  /** Numbers per window. */
  public static final int FEATURES = 16;

  /** Machine states, in label order. */
  public static final List<String> STATES = List.of("normal", "imbalance", "bearing-wear", "belt-slip");

  /** Column names of the features, for the README and the CSV header of the inputs. */
  public static final List<String> FEATURE_NAMES = List.of(
      "band1", "band2", "band3", "band4", "band5", "band6", "band7", "band8",
      "crest", "kurtosis", "peak_ratio", "speed", "temp", "harm1", "harm2", "harm3");

  /** Kinds of planted windows ({@link Window#planted()}); {@code ""} for an ordinary window. */
  public static final String RESENT = "resent", STUCK = "stuck-sensor", LEAKED = "leaked", RELABELLED = "relabelled",
      NEW_MACHINE = "new-machine", LOOSE_SENSOR = "loose-sensor";

  /**
   * One window: key, features, state (label index, -1 when unknown), line, shift, week (1-52;
   * weeks 1-26 are summer), split, and which planted problem it belongs to ({@code ""} if none).
   * {@code copyOf} is the key of the window it copies, or {@code ""}.
   */
  public record Window(String key, float[] features, int state, String line, String shift, int week,
      String split, String planted, String copyOf) {
    public String label() {
      return state < 0 ? "unknown" : STATES.get(state);
    }

    public String season() {
      return week <= 26 ? "summer" : "winter";
    }
  }

  /** Everything the demo writes, with the truth it planted. */
  public record Plant(List<Window> history, List<Window> calibration, List<Window> incoming,
      List<Window> weekBefore, List<Window> weekAfter) {
    /** The first half of the week before (the control for the drift test: two halves of one week). */
    public List<Window> weekBeforeFirstHalf() {
      return weekBefore.subList(0, weekBefore.size() / 2);
    }

    public List<Window> weekBeforeSecondHalf() {
      return weekBefore.subList(weekBefore.size() / 2, weekBefore.size());
    }
  }

  /** Sizes of the planted problems, so the demo and its test can scale them. */
  public record Sizes(int history, int resent, int stuck, int leaked, int relabelled, int calibration,
      int incomingNormal, int incomingNewMachine, int incomingLoose, int week) {
    /** The full demo: about 20,000 windows in the index. */
    public static Sizes full() {
      return new Sizes(19_800, 60, 40, 30, 25, 2_000, 400, 100, 100, 800);
    }

    /** A reduced demo for tests. */
    public static Sizes small() {
      return new Sizes(3_000, 20, 15, 10, 10, 600, 200, 50, 50, 300);
    }
  }

  private static final double[][] STATE_SHIFT = new double[STATES.size()][FEATURES];

  static {
    // imbalance: strong 1x shaft-speed component, low bands up
    add(1, new int[] {0, 1, 10, 13}, new double[] {1.4, 1.0, -0.8, 1.2});
    // bearing wear: high bands up, spiky signal (crest, kurtosis), warmer
    add(2, new int[] {5, 6, 7, 8, 9, 12}, new double[] {1.1, 1.3, 1.0, 1.2, 1.5, 0.9});
    // belt slip: speed drops and wanders, mid bands and 2nd/3rd harmonics up
    add(3, new int[] {2, 3, 11, 14, 15}, new double[] {1.0, 0.9, -1.3, 1.1, 0.8});
  }

  private static void add(int state, int[] cols, double[] by) {
    for (int i = 0; i < cols.length; i++) STATE_SHIFT[state][cols[i]] = by[i];
  }

  private static final String[] LINES = {"L1", "L2", "L3"};

  private VibrationScenario() {}

  /** The history with its planted problems and the query sets, all from {@code seed}. */
  public static Plant plant(Sizes sizes, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    int ordinary = sizes.history() - sizes.resent() - sizes.stuck() - sizes.leaked() - sizes.relabelled();
    List<Window> history = new ArrayList<>(sizes.history());
    for (int i = 0; i < ordinary; i++) history.add(ordinary(rnd, key("w", history.size()), rnd.nextDouble() < 0.2 ? "test" : "train", -1));
    // a flaky logger re-sent some windows: byte-identical features, same label and split, a new key
    for (int i = 0; i < sizes.resent(); i++) {
      Window w = history.get(rnd.nextInt(ordinary));
      history.add(copy(w, key("w", history.size()), w.state(), w.split(), RESENT));
    }
    // a stuck sensor on line L3 in week 40 sent nearly the same window again and again (train batch)
    float[] stuck = ordinary(rnd, "", "train", 40).features();
    for (int i = 0; i < sizes.stuck(); i++) {
      float[] x = stuck.clone();
      for (int f = 0; f < FEATURES; f++) x[f] += (float) (gauss(rnd) * 0.002);
      history.add(new Window(key("w", history.size()), x, 0, "L3", i % 3 == 0 ? "night" : "day", 40, "train", STUCK, ""));
    }
    // training windows copied into the test split
    for (int i = 0; i < sizes.leaked(); i++) {
      Window w = trainWindow(history, ordinary, rnd);
      history.add(copy(w, key("w", history.size()), w.state(), "test", LEAKED));
    }
    // windows labelled a second time by someone else, with another state
    for (int i = 0; i < sizes.relabelled(); i++) {
      Window w = trainWindow(history, ordinary, rnd);
      int other = (w.state() + 1 + rnd.nextInt(STATES.size() - 1)) % STATES.size();
      history.add(copy(w, key("w", history.size()), other, "train", RELABELLED));
    }
    List<Window> calibration = new ArrayList<>();
    for (int i = 0; i < sizes.calibration(); i++) calibration.add(ordinary(rnd, key("cal", i), "calibration", -1));
    List<Window> incoming = new ArrayList<>();
    for (int i = 0; i < sizes.incomingNormal(); i++) incoming.add(ordinary(rnd, key("new", incoming.size()), "new", -1));
    for (int i = 0; i < sizes.incomingNewMachine(); i++) incoming.add(newMachine(rnd, key("new", incoming.size())));
    for (int i = 0; i < sizes.incomingLoose(); i++) incoming.add(looseSensor(rnd, key("new", incoming.size())));
    List<Window> before = new ArrayList<>(), after = new ArrayList<>();
    for (int i = 0; i < sizes.week(); i++) before.add(onLine(rnd, key("wk47", i), "L1", 47, false));
    for (int i = 0; i < sizes.week(); i++) after.add(onLine(rnd, key("wk48", i), "L1", 48, true));
    return new Plant(List.copyOf(history), List.copyOf(calibration), List.copyOf(incoming), List.copyOf(before), List.copyOf(after));
  }

  private static String key(String prefix, int i) {
    return String.format("%s-%05d", prefix, i + 1);
  }

  private static Window trainWindow(List<Window> history, int ordinary, SplittableRandom rnd) {
    while (true) {
      Window w = history.get(rnd.nextInt(ordinary));
      if (w.split().equals("train")) return w;
    }
  }

  private static Window copy(Window w, String key, int state, String split, String planted) {
    return new Window(key, w.features().clone(), state, w.line(), w.shift(), w.week(), split, planted, w.key());
  }

  /** An ordinary labelled window on a random line and week ({@code week} -1) or the given week. */
  private static Window ordinary(SplittableRandom rnd, String key, String split, int week) {
    String line = LINES[rnd.nextInt(LINES.length)];
    return window(rnd, key, line, week < 0 ? 1 + rnd.nextInt(52) : week, split, pickState(rnd), false);
  }

  /** A window of one line and week; {@code newBearing}: after the bearing change (quieter high bands, cooler, less spiky). */
  private static Window onLine(SplittableRandom rnd, String key, String line, int week, boolean newBearing) {
    return window(rnd, key, line, week, "week-" + week, pickState(rnd), newBearing);
  }

  private static Window window(SplittableRandom rnd, String key, String line, int week, String split, int state, boolean newBearing) {
    boolean night = rnd.nextDouble() < 0.4;
    int lineNo = line.charAt(1) - '1';
    float[] x = new float[FEATURES];
    for (int f = 0; f < FEATURES; f++) {
      double v = gauss(rnd) * 0.6 + STATE_SHIFT[state][f] * (0.7 + 0.6 * rnd.nextDouble());
      v += 0.15 * (lineNo - 1) * ((f % 3) - 1);  // mounting differs a little per line
      if (night && f == 11) v += 0.4;             // the night shift runs faster
      if (f == 12 && week <= 26) v += 0.5;        // summer runs warmer
      if (newBearing && (f == 5 || f == 6 || f == 7)) v -= 0.45;
      if (newBearing && (f == 9 || f == 12)) v -= 0.35;
      x[f] = (float) v;
    }
    return new Window(key, x, state, line, night ? "night" : "day", week, split, "", "");
  }

  /** A capping machine on a new line: its spectrum peaks in other bands and it runs much faster. */
  private static Window newMachine(SplittableRandom rnd, String key) {
    float[] x = new float[FEATURES];
    double[] profile = {-1.2, -0.8, 2.2, 2.6, 2.0, -0.6, -1.0, -1.4, 0.4, -0.5, 1.8, 2.8, 0.2, -1.1, 1.9, -0.9};
    for (int f = 0; f < FEATURES; f++) x[f] = (float) (profile[f] + gauss(rnd) * 0.5);
    return new Window(key, x, -1, "L4", rnd.nextDouble() < 0.4 ? "night" : "day", 48, "new", NEW_MACHINE, "");
  }

  /** A loose sensor: every band high and noisy, the shape features erratic. */
  private static Window looseSensor(SplittableRandom rnd, String key) {
    float[] x = new float[FEATURES];
    for (int f = 0; f < FEATURES; f++) x[f] = (float) (f < 8 ? 3.0 + 1.5 * gauss(rnd) : 2.0 * gauss(rnd));
    return new Window(key, x, -1, LINES[rnd.nextInt(LINES.length)], "day", 48, "new", LOOSE_SENSOR, "");
  }

  private static int pickState(SplittableRandom rnd) {
    double[] odds = {0.55, 0.15, 0.15, 0.15};
    double u = rnd.nextDouble();
    for (int i = 0; i < odds.length - 1; i++) if ((u -= odds[i]) < 0) return i;
    return odds.length - 1;
  }

  private static double gauss(SplittableRandom rnd) {
    double u = 1 - rnd.nextDouble(), v = rnd.nextDouble();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  }
}
