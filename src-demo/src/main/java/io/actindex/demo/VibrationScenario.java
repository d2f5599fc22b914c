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
 * harmonics ratios. Each state shifts a few of them; lines differ slightly (mounting), and the
 * night shift runs a little faster.
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

  /** One window: its key, features, state (label index), line, shift and split. */
  public record Window(String key, float[] features, int state, String line, String shift, String split) {
    public String label() {
      return state < 0 ? "unknown" : STATES.get(state);
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

  private VibrationScenario() {}

  /**
   * {@code n} labelled windows; a fraction {@code testShare} of them are marked split "test",
   * the rest "train". Keys are {@code prefix-00001} and up.
   */
  public static List<Window> windows(int n, double testShare, String prefix, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    double[] stateOdds = {0.55, 0.15, 0.15, 0.15};
    String[] lines = {"L1", "L2", "L3"};
    List<Window> out = new ArrayList<>(n);
    for (int i = 0; i < n; i++) {
      int state = pick(rnd, stateOdds);
      int line = rnd.nextInt(lines.length);
      boolean night = rnd.nextDouble() < 0.4;
      float[] x = new float[FEATURES];
      for (int f = 0; f < FEATURES; f++) {
        double v = gauss(rnd) * 0.6 + STATE_SHIFT[state][f] * (0.7 + 0.6 * rnd.nextDouble());
        v += 0.15 * (line - 1) * ((f % 3) - 1);   // mounting differs a little per line
        if (night && f == 11) v += 0.4;           // night shift runs faster
        x[f] = (float) v;
      }
      String key = String.format("%s-%05d", prefix, i + 1);
      String split = rnd.nextDouble() < testShare ? "test" : "train";
      out.add(new Window(key, x, state, lines[line], night ? "night" : "day", split));
    }
    return out;
  }

  /** A window unlike any state seen in training (a loose sensor): every band high and noisy. */
  public static Window oddWindow(String key, long seed) {
    SplittableRandom rnd = new SplittableRandom(seed);
    float[] x = new float[FEATURES];
    for (int f = 0; f < FEATURES; f++) x[f] = (float) (3.5 + 1.5 * gauss(rnd));
    return new Window(key, x, -1, "L2", "night", "new");
  }

  private static int pick(SplittableRandom rnd, double[] odds) {
    double u = rnd.nextDouble();
    for (int i = 0; i < odds.length - 1; i++) if ((u -= odds[i]) < 0) return i;
    return odds.length - 1;
  }

  private static double gauss(SplittableRandom rnd) {
    double u = 1 - rnd.nextDouble(), v = rnd.nextDouble();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  }
}
