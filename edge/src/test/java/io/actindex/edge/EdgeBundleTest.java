package io.actindex.edge;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The edge reader on its own (the index-side agreement is tested in the query module): scores
 * against every example listed out one by one (a code shared by c examples appears c times), the
 * decision-only path against the score, the byte format round trip, refusals of damaged bundles,
 * and the command-line entry point's exit codes.
 */
class EdgeBundleTest {
  @TempDir Path tmp;

  /** A random bundle: {@code n} unique codes of {@code bits} bits with counts 1..4, descending. */
  static EdgeBundle random(long seed, int n, int bits, EdgeBundle.Statistic st, double threshold, boolean model) {
    SplittableRandom rnd = new SplittableRandom(seed);
    int words = (bits + 63) >>> 6;
    long[] codes = new long[n * words];
    for (int i = 0; i < codes.length; i++) codes[i] = rnd.nextLong();
    for (int i = 0; i < n; i++) if ((bits & 63) != 0) codes[i * words + words - 1] &= (1L << (bits & 63)) - 1;
    int[] counts = new int[n];
    for (int i = 0; i < n; i++) counts[i] = 1 + rnd.nextInt(4);
    Integer[] boxed = Arrays.stream(counts).boxed().sorted((a, b) -> b - a).toArray(Integer[]::new);
    for (int i = 0; i < n; i++) counts[i] = boxed[i];
    double[] cal = new double[25];
    for (int i = 0; i < cal.length; i++) cal[i] = rnd.nextInt(bits / 2);
    Arrays.sort(cal);
    List<String> layers = bits == 70 ? List.of("b") : List.of(); // 256 bits unmasked: the register fast path
    EdgeBundle.Model m = null;
    if (model) {
      float[] w1 = new float[20 * 3], b1 = new float[20], w2 = new float[(bits - 20) * 20], b2 = new float[bits - 20], w3 = new float[2 * (bits - 20)];
      for (float[] a : List.of(w1, b1, w2, b2, w3)) for (int i = 0; i < a.length; i++) a[i] = (float) rnd.nextGaussian();
      double[] thresholds = new double[bits];
      m = new EdgeBundle.Model(List.of(new EdgeBundle.Layer("a", 20, 3, w1, b1), new EdgeBundle.Layer("b", bits - 20, 20, w2, b2),
          new EdgeBundle.Layer("out", 2, bits - 20, w3, new float[2])), thresholds);
    }
    return new EdgeBundle(List.of("a", "b"), new int[] {20, bits - 20}, codes, counts,
        new EdgeBundle.Calibration(3, st, layers, 0.9, threshold, cal), m);
  }

  @Test
  void scoresMatchEveryExampleListedOut() {
    for (int rep = 0; rep < 40; rep++) {
      long seed = 1000 + rep;
      int bits = new int[] {70, 36, 256}[rep % 3];
      EdgeBundle.Statistic st = rep % 4 < 2 ? EdgeBundle.Statistic.KTH : EdgeBundle.Statistic.MEAN;
      EdgeBundle b = random(seed, 50, bits, st, new SplittableRandom(seed).nextInt(bits / 2) + (rep % 3 == 0 ? 0.5 : 0), false);
      long[] mask = b.calibration().layers().isEmpty() ? null : b.mask(b.calibration().layers());
      List<long[]> examples = new ArrayList<>();
      for (int i = 0; i < b.uniqueCodes(); i++) for (int c = 0; c < b.count(i); c++) examples.add(b.code(i));
      SplittableRandom rnd = new SplittableRandom(seed * 7);
      for (int qi = 0; qi < 30; qi++) {
        long[] q = qi % 3 == 0 ? b.code(rnd.nextInt(b.uniqueCodes())) : b.code(rnd.nextInt(b.uniqueCodes()));
        if (qi % 3 != 0) for (int f = 0; f < 1 + rnd.nextInt(bits / 3); f++) {
          int bit = rnd.nextInt(bits);
          q[bit >>> 6] ^= 1L << (bit & 63);
        }
        int[] d = new int[examples.size()];
        for (int e = 0; e < d.length; e++)
          for (int bit = 0; bit < bits; bit++)
            if ((mask == null || (mask[bit >>> 6] >>> (bit & 63) & 1) != 0) && ((q[bit >>> 6] ^ examples.get(e)[bit >>> 6]) >>> (bit & 63) & 1) != 0) d[e]++;
        Arrays.sort(d);
        double mean = (d[0] + d[1] + d[2]) / 3.0;
        long zeros = Arrays.stream(d).filter(x -> x == 0).count();
        EdgeBundle.Score s = b.score(q);
        String what = "seed " + seed + " query " + qi;
        assertThat(s.kth()).as(what).isEqualTo(d[2]);
        assertThat(s.mean()).as(what).isEqualTo(mean);
        assertThat(s.ownRegion()).as(what).isEqualTo(zeros);
        assertThat(s.value()).isEqualTo(st == EdgeBundle.Statistic.KTH ? d[2] : mean);
        assertThat(b.isOut(q)).as(what + " decision only").isEqualTo(s.value() > b.calibration().threshold());
      }
    }
  }

  /**
   * A caller's code whose words carry bits past the code width (a reused buffer, a packer that
   * leaves its padding dirty): they are no positions of the code, so they never count, as in the
   * index's searchers (Hamming distance over the code's own positions: R. W. Hamming, Bell System
   * Technical Journal, 1950). Checked against the distances counted bit by bit over the width.
   */
  @Test
  void bitsPastTheWidthNeverCount() {
    for (int rep = 0; rep < 12; rep++) {
      long seed = 5000 + rep;
      int bits = new int[] {36, 100, 70}[rep % 3];
      EdgeBundle.Statistic st = rep % 2 == 0 ? EdgeBundle.Statistic.KTH : EdgeBundle.Statistic.MEAN;
      SplittableRandom rnd = new SplittableRandom(seed);
      EdgeBundle b = random(seed, 40, bits, st, rnd.nextInt(bits / 2) + 0.5, false);
      long[] mask = b.calibration().layers().isEmpty() ? null : b.mask(b.calibration().layers());
      long ghost = -1L << (bits & 63);
      for (int qi = 0; qi < 20; qi++) {
        long[] q = b.code(rnd.nextInt(b.uniqueCodes()));
        for (int f = 0; f < rnd.nextInt(bits / 3); f++) {
          int bit = rnd.nextInt(bits);
          q[bit >>> 6] ^= 1L << (bit & 63);
        }
        long[] dirty = q.clone();
        dirty[dirty.length - 1] |= (qi % 2 == 0 ? -1L : rnd.nextLong()) & ghost;
        long[] before = dirty.clone();
        List<Integer> d = new ArrayList<>();
        for (int i = 0; i < b.uniqueCodes(); i++) {
          long[] c = b.code(i);
          int dist = 0;
          for (int bit = 0; bit < bits; bit++)
            if ((mask == null || (mask[bit >>> 6] >>> (bit & 63) & 1) != 0) && ((q[bit >>> 6] ^ c[bit >>> 6]) >>> (bit & 63) & 1) != 0) dist++;
          for (int c2 = 0; c2 < b.count(i); c2++) d.add(dist);
        }
        d.sort(null);
        String what = "seed " + seed + " bits " + bits + " query " + qi;
        EdgeBundle.Score s = b.score(dirty);
        assertThat(s.kth()).as(what).isEqualTo(d.get(2));
        assertThat(s.mean()).as(what).isEqualTo((d.get(0) + d.get(1) + d.get(2)) / 3.0);
        assertThat(b.isOut(dirty)).as(what + " decision only").isEqualTo(b.isOut(q));
        assertThat(dirty).as(what + ": the caller's code is left as it was").isEqualTo(before);
      }
    }
  }

  @Test
  void formatRoundTripsAndRefusesDamage() throws Exception {
    EdgeBundle b = random(7, 30, 70, EdgeBundle.Statistic.MEAN, 5, true);
    byte[] bytes = BundleFormat.toBytes(b);
    EdgeBundle back = BundleFormat.read(bytes, "x");
    assertThat(BundleFormat.toBytes(back)).isEqualTo(bytes);
    double[] input = {0.25, -1, 3};
    assertThat(back.encode(input)).isEqualTo(b.encode(input));
    assertThat(back.maxSoftmax(input)).isEqualTo(b.maxSoftmax(input));
    for (int pos = 0; pos < bytes.length; pos += 3) {
      byte[] bad = bytes.clone();
      bad[pos] ^= 0x10;
      int at = pos;
      assertThatThrownBy(() -> BundleFormat.read(bad, "bad.edge")).as("flip at " + at).isInstanceOf(EdgeFormatException.class)
          .hasMessageStartingWith("bad.edge: ");
    }
    byte[] v2 = bytes.clone();
    v2[11] = 2; // version 2, CRC unchanged: damage, the version field told beside it (it was told as a bundle of version 2)
    assertThatThrownBy(() -> BundleFormat.read(v2, "v2.edge")).hasMessageStartingWith("v2.edge: CRC32 mismatch")
        .hasMessageEndingWith("the bundle is damaged (its version field reads 2, this reader reads 1)");
    java.util.zip.CRC32 crc = new java.util.zip.CRC32();
    crc.update(v2, 0, v2.length - 4);
    java.nio.ByteBuffer.wrap(v2, v2.length - 4, 4).putInt((int) crc.getValue()); // a version 2 bundle written whole
    assertThatThrownBy(() -> BundleFormat.read(v2, "v2.edge")).hasMessage("v2.edge: field version: bundle version 2, this reader reads 1");
    assertThatThrownBy(() -> BundleFormat.read(Arrays.copyOf(bytes, 10), "cut.edge")).isInstanceOf(EdgeFormatException.class);
    assertThatThrownBy(() -> BundleFormat.read("PK\u0003\u0004 a zip file".getBytes(StandardCharsets.ISO_8859_1), "a.zip"))
        .hasMessageContaining("not an actindex edge bundle");
  }

  /**
   * An empty file, and one cut inside its first 16 bytes (magic and version) while what is there
   * reads as a bundle's start, are told as such: both were told "magic bytes differ", which they do not.
   */
  @Test
  void emptyAndShortFilesAreToldAsSuch() {
    byte[] bytes = BundleFormat.toBytes(random(7, 30, 70, EdgeBundle.Statistic.MEAN, 5, true));
    assertThatThrownBy(() -> BundleFormat.read(new byte[0], "empty.edge")).hasMessage("empty.edge: the file is empty (0 bytes), not a bundle");
    for (int n : new int[] {1, 7, 8, 12, 15}) {
      byte[] cut = Arrays.copyOf(bytes, n);
      assertThatThrownBy(() -> BundleFormat.read(cut, "cut.edge")).as(n + " bytes")
          .hasMessage("cut.edge: truncated: " + n + " bytes, the start of a bundle but too short to hold one");
    }
    byte[] other = Arrays.copyOf(bytes, 12);
    other[3] = 'x';
    assertThatThrownBy(() -> BundleFormat.read(other, "other.edge")).hasMessage("other.edge: not an actindex edge bundle (magic bytes differ)");
  }

  @Test
  void encodeFollowsTheForwardPass() {
    // one hidden layer of 2 units (weights [[1, -1], [0.5, 0.5]], bias [0, -1]) and thresholds 0 and 0.25
    EdgeBundle.Model m = new EdgeBundle.Model(List.of(new EdgeBundle.Layer("h", 2, 2, new float[] {1, -1, 0.5f, 0.5f}, new float[] {0, -1}),
        new EdgeBundle.Layer("o", 2, 2, new float[] {1, 0, 0, 1}, new float[] {0, 0})), new double[] {0, 0.25});
    EdgeBundle b = new EdgeBundle(List.of("h"), new int[] {2}, new long[] {0}, new int[] {1}, null, m);
    assertThat(b.encode(new double[] {2, 1})).containsExactly(3L); // h = (1, 0.5): both above their thresholds
    assertThat(b.encode(new double[] {1, 1})).containsExactly(0L); // h = (0, 0)
    assertThat(b.encode(new double[] {1.5, 0})).containsExactly(1L); // h = (1.5, relu(-0.25) = 0)
    assertThat(b.encode(new double[] {2.5, 0})).containsExactly(1L); // h = (2.5, 0.25): 0.25 is not > 0.25
    assertThat(b.encode(new double[] {3, 0})).containsExactly(3L); // h = (3, 0.5)
    // as the index: a hidden activation of +Infinity or NaN is refused, -Infinity is ReLU's 0
    assertThatThrownBy(() -> b.encode(new double[] {Double.MAX_VALUE, -Double.MAX_VALUE})).isInstanceOf(IllegalArgumentException.class)
        .hasMessageContaining("layer h, unit 0 overflows (Infinity)");
    // an input that is NaN or infinite is refused as the index's readers refuse it, before the weights see it
    assertThatThrownBy(() -> b.encode(new double[] {Double.NaN, 0})).hasMessageContaining("input 0 is NaN; only finite numbers are accepted");
    // the softmax baseline refuses the same inputs (it returned a probability for them before)
    assertThatThrownBy(() -> b.maxSoftmax(new double[] {0, Double.NEGATIVE_INFINITY})).hasMessageContaining("input 1 is -Infinity; only finite numbers are accepted");
    assertThatThrownBy(() -> b.maxSoftmax(new double[] {0})).hasMessageContaining("input has 1 values, the model takes 2");
    assertThatThrownBy(() -> b.encode(new double[] {0, Double.NEGATIVE_INFINITY})).hasMessageContaining("input 1 is -Infinity");
    assertThat(b.encode(new double[] {-Double.MAX_VALUE, Double.MAX_VALUE})).containsExactly(0L); // h = (relu(-Infinity), relu(-1))
    // softmax of logits (a, b) = h: max probability 1 / (1 + e^-|a-b|)
    assertThat(b.maxSoftmax(new double[] {3, 0})).isCloseTo(1 / (1 + Math.exp(-2.5)), org.assertj.core.api.Assertions.within(1e-15));
  }

  /** {@code b} (with its model) given a range guard of {@code bounds}. */
  static EdgeBundle guarded(EdgeBundle b, double[] bounds) {
    long[] codes = new long[b.uniqueCodes() * b.words()];
    int[] counts = new int[b.uniqueCodes()];
    for (int i = 0; i < counts.length; i++) {
      System.arraycopy(b.code(i), 0, codes, i * b.words(), b.words());
      counts[i] = b.count(i);
    }
    return new EdgeBundle(b.layerNames(), b.layerBits(), codes, counts, b.calibration(),
        new EdgeBundle.Model(b.model().layers(), b.model().thresholds(), bounds));
  }

  /**
   * The range ratio by hand: hidden layers h1 = relu(x0, x1) and h2 = relu(4 h1[0] - h1[1]), bounds 5
   * and 14; the ratio is the larger of |h1| / 5 and |h2| / 14 (Euclidean norms, worked out beside).
   */
  @Test
  void rangeRatioIsTheLargestLayerNormOverItsBound() {
    List<EdgeBundle.Layer> layers = List.of(new EdgeBundle.Layer("h1", 2, 2, new float[] {1, 0, 0, 1}, new float[2]),
        new EdgeBundle.Layer("h2", 1, 2, new float[] {4, -1}, new float[1]), new EdgeBundle.Layer("o", 1, 1, new float[] {1}, new float[1]));
    EdgeBundle b = new EdgeBundle(List.of("h1", "h2"), new int[] {2, 1}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(layers, new double[3], new double[] {5, 14}));
    assertThat(b.hasRangeGuard()).isTrue();
    assertThat(b.encodeWithRange(new double[] {3, 4}).range()).isEqualTo(1.0); // |(3, 4)| / 5 = 1; (12 - 4) / 14
    assertThat(b.encodeWithRange(new double[] {7, 0}).range()).isEqualTo(2.0); // 7 / 5 = 1.4; 28 / 14 = 2: h2 decides
    assertThat(b.encodeWithRange(new double[] {0, 12}).range()).isEqualTo(2.4); // 12 / 5; relu(-12) = 0: h1 decides
    assertThat(b.encodeWithRange(new double[] {-3, 4}).range()).isEqualTo(0.8); // relu: (0, 4) -> 4 / 5; relu(-4) = 0
    assertThat(b.encodeWithRange(new double[] {-1, -2}).range()).isZero(); // every activation 0
    for (double[] x : List.of(new double[] {3, 4}, new double[] {-3, 4}, new double[] {7, 0}))
      assertThat(b.encodeWithRange(x).code()).isEqualTo(b.encode(x));
    // a layer dead on every training example (bound 0): 0 while it stays dead, +Infinity once a unit is on
    EdgeBundle dead = new EdgeBundle(List.of("h1", "h2"), new int[] {2, 1}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(layers, new double[3], new double[] {5, 0}));
    assertThat(dead.encodeWithRange(new double[] {7, 0}).range()).isEqualTo(Double.POSITIVE_INFINITY); // h2 = 28
    assertThat(dead.encodeWithRange(new double[] {-3, 4}).range()).isEqualTo(0.8); // h2 = 0; h1 = (0, 4)
    // a hidden layer outside the code layout has no bound: only h2 counts here
    EdgeBundle only2 = new EdgeBundle(List.of("h2"), new int[] {1}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(layers, new double[1], new double[] {14}));
    assertThat(only2.encodeWithRange(new double[] {0, 12}).range()).isZero();
    assertThat(only2.encodeWithRange(new double[] {3, 4}).range()).isEqualTo(8 / 14.0);
    // no guard, and bounds that do not fit
    EdgeBundle none = new EdgeBundle(List.of("h1", "h2"), new int[] {2, 1}, new long[] {0}, new int[] {1}, null, new EdgeBundle.Model(layers, new double[3]));
    assertThat(none.hasRangeGuard()).isFalse();
    assertThatThrownBy(() -> none.encodeWithRange(new double[] {1, 1})).isInstanceOf(IllegalStateException.class).hasMessageContaining("no range guard");
    assertThatThrownBy(() -> new EdgeBundle(List.of("h1", "h2"), new int[] {2, 1}, new long[] {0}, new int[] {1}, null,
        new EdgeBundle.Model(layers, new double[3], new double[] {5}))).hasMessageContaining("1 range bounds for 2 code layers");
    for (double bad : new double[] {-1, Double.NaN, Double.POSITIVE_INFINITY})
      assertThatThrownBy(() -> new EdgeBundle.Model(layers, new double[3], new double[] {5, bad})).hasMessageContaining("range bound 1 is " + bad);
  }

  /**
   * The range guard in the bytes: it round-trips, a bundle without it keeps the bytes of the format
   * before it (the resource was written by the edge module before the guard existed, from the same
   * parameters as {@code random(21, 12, 70, MEAN, 6.5, true)}), and damage to its section is refused.
   */
  @Test
  void rangeGuardIsWrittenReadAndItsDamageRefused() throws Exception {
    byte[] before;
    try (var in = EdgeBundleTest.class.getResourceAsStream("before-range-guard.edge")) {
      before = in.readAllBytes();
    }
    EdgeBundle plain = random(21, 12, 70, EdgeBundle.Statistic.MEAN, 6.5, true);
    assertThat(BundleFormat.toBytes(plain)).as("no guard: the bytes of the format before it").isEqualTo(before);
    EdgeBundle old = BundleFormat.read(before, "before.edge");
    assertThat(old.hasRangeGuard()).isFalse();
    assertThat(old.encode(new double[] {0.5, -1, 2})).isEqualTo(plain.encode(new double[] {0.5, -1, 2}));

    EdgeBundle b = guarded(plain, new double[] {3.25, 0});
    byte[] bytes = BundleFormat.toBytes(b);
    assertThat(bytes.length).isEqualTo(before.length + 16); // 8 bytes per code layer
    EdgeBundle back = BundleFormat.read(bytes, "g.edge");
    assertThat(back.model().rangeBounds()).containsExactly(3.25, 0);
    assertThat(BundleFormat.toBytes(back)).isEqualTo(bytes);
    double[] x = {0.25, -1, 3};
    assertThat(back.encodeWithRange(x)).usingRecursiveComparison().isEqualTo(b.encodeWithRange(x));
    int guardAt = bytes.length - 4 - 16;
    for (int pos = guardAt; pos < bytes.length - 4; pos++) { // every byte of the section: the CRC tells
      byte[] bad = bytes.clone();
      bad[pos] ^= 0x01;
      assertThatThrownBy(() -> BundleFormat.read(bad, "bad.edge")).hasMessageStartingWith("bad.edge: CRC32 mismatch");
    }
    // damage whose CRC was written after it (a writer bug, a crafted file): each refused naming the field
    byte[] cut = withCrc(Arrays.copyOfRange(bytes, 0, bytes.length - 4 - 8)); // the last bound lost
    assertThatThrownBy(() -> BundleFormat.read(cut, "cut.edge")).hasMessage("cut.edge: field range guard: truncated");
    byte[] negative = bytes.clone();
    java.nio.ByteBuffer.wrap(negative).putDouble(guardAt, -3.25);
    assertThatThrownBy(() -> BundleFormat.read(withCrc(Arrays.copyOf(negative, negative.length - 4)), "neg.edge"))
        .hasMessage("neg.edge: field range guard: bound of layer a is -3.25 (finite and >= 0 expected)");
    byte[] nan = bytes.clone();
    java.nio.ByteBuffer.wrap(nan).putDouble(guardAt + 8, Double.NaN);
    assertThatThrownBy(() -> BundleFormat.read(withCrc(Arrays.copyOf(nan, nan.length - 4)), "nan.edge"))
        .hasMessage("nan.edge: field range guard: bound of layer b is NaN (finite and >= 0 expected)");
    byte[] flagOnly = before.clone(); // the flag set on a bundle without the section
    flagOnly[15] |= BundleFormat.FLAG_RANGE;
    assertThatThrownBy(() -> BundleFormat.read(withCrc(Arrays.copyOf(flagOnly, flagOnly.length - 4)), "flag.edge"))
        .hasMessage("flag.edge: field range guard: truncated");
    byte[] noModel = BundleFormat.toBytes(random(21, 12, 70, EdgeBundle.Statistic.MEAN, 6.5, false));
    noModel[15] |= BundleFormat.FLAG_RANGE;
    assertThatThrownBy(() -> BundleFormat.read(withCrc(Arrays.copyOf(noModel, noModel.length - 4)), "nm.edge"))
        .hasMessage("nm.edge: field flags: a range guard without a model");
  }

  /** {@code body} followed by its CRC32, as the writer ends a bundle. */
  private static byte[] withCrc(byte[] body) {
    java.util.zip.CRC32 crc = new java.util.zip.CRC32();
    crc.update(body);
    byte[] out = Arrays.copyOf(body, body.length + 4);
    java.nio.ByteBuffer.wrap(out, body.length, 4).putInt((int) crc.getValue());
    return out;
  }

  /** {@code --inputs} ends each row with the range ratio, empty without a guard; codes rows keep their four columns. */
  @Test
  void commandLinePrintsTheRangeRatioLast() throws Exception {
    EdgeBundle plain = random(13, 20, 70, EdgeBundle.Statistic.KTH, 6, true);
    EdgeBundle b = guarded(plain, new double[] {4, 30});
    Path file = tmp.resolve("g.edge"), none = tmp.resolve("n.edge");
    Files.write(file, BundleFormat.toBytes(b));
    Files.write(none, BundleFormat.toBytes(plain));
    double[][] rows = {{0.5, 2, 3}, {0.05, 0.2, 0.3}, {50, -20, 30}};
    StringBuilder in = new StringBuilder();
    for (double[] x : rows) in.append(x[0]).append(',').append(x[1]).append(',').append(x[2]).append('\n');
    Run g = run(new String[] {file.toString(), "--inputs"}, in.toString()), n = run(new String[] {none.toString(), "--inputs"}, in.toString());
    assertThat(g.code).as(g.err).isZero();
    List<String> gl = g.out.lines().toList(), nl = n.out.lines().toList();
    assertThat(gl.get(1)).isEqualTo("row,score,decision,p_value,range");
    assertThat(nl.get(1)).isEqualTo("row,score,decision,p_value,range");
    for (int i = 0; i < rows.length; i++) {
      EdgeBundle.Encoded e = b.encodeWithRange(rows[i]);
      double s = b.score(e.code()).value();
      String head = i + "," + s + "," + (b.isOut(e.code()) ? "out" : "in") + "," + b.pValue(s);
      assertThat(gl.get(2 + i)).isEqualTo(head + "," + e.range());
      assertThat(nl.get(2 + i)).as("no guard: the column is empty").isEqualTo(head + ",");
    }
    assertThat(gl.stream().skip(2).mapToDouble(l -> Double.parseDouble(l.substring(l.lastIndexOf(',') + 1))).max().getAsDouble())
        .as("the scaled row goes beyond a bound").isGreaterThan(1);
    long[] c = b.code(0);
    StringBuilder bits = new StringBuilder();
    for (int i = 0; i < 70; i++) bits.append((c[i >>> 6] >>> (i & 63) & 1) != 0 ? '1' : '0');
    assertThat(run(new String[] {file.toString()}, bits + "\n").out.lines().toList()).element(1).isEqualTo("row,score,decision,p_value");
  }

  @Test
  void commandLineScoresRowsAndRefusesBadBundles() throws Exception {
    EdgeBundle b = random(9, 20, 36, EdgeBundle.Statistic.KTH, 6, false);
    Path file = tmp.resolve("b.edge");
    Files.write(file, BundleFormat.toBytes(b));
    StringBuilder bits = new StringBuilder();
    long[] c = b.code(0);
    for (int i = 0; i < 36; i++) bits.append((c[i >>> 6] >>> (i & 63) & 1) != 0 ? '1' : '0');
    Run ok = run(new String[] {file.toString()}, bits + "\n");
    assertThat(ok.code).as(ok.err).isZero();
    assertThat(ok.out.lines().toList()).hasSize(3).element(2).isEqualTo("0," + b.score(c).value() + ",in," + b.pValue(b.score(c).value()));
    Run badRow = run(new String[] {file.toString()}, "0101\n");
    assertThat(badRow.code).isEqualTo(2);
    assertThat(badRow.err).startsWith("stdin line 1 (row 0): 4 bits");
    Files.write(tmp.resolve("d.edge"), Arrays.copyOf(Files.readAllBytes(file), 50));
    Run damaged = run(new String[] {tmp.resolve("d.edge").toString()}, "");
    assertThat(damaged.code).isEqualTo(2);
    assertThat(damaged.err.lines().count()).isEqualTo(1);
    assertThat(run(new String[] {tmp.resolve("none.edge").toString()}, "").err).contains("no such file");
    assertThat(run(new String[] {file.toString(), "--inputs"}, "").err).contains("--with-model");
    // a Java caller is told the exporter's Java parameter, not the command line's option
    assertThatThrownBy(() -> b.encode(new double[] {1})).isInstanceOf(IllegalStateException.class)
        .hasMessageContaining("`withModel`").hasMessageNotContaining("--");
  }

  /** Every bad bundle path and row: exit 2 and one line on stderr naming the file (or stdin row) and what is wrong. */
  @Test
  void commandLineRefusesBadPathsBundlesAndRowsWithOneLine() throws Exception {
    EdgeBundle b = random(11, 20, 70, EdgeBundle.Statistic.KTH, 6, true);
    Path file = tmp.resolve("m.edge");
    Files.write(file, BundleFormat.toBytes(b));
    Path folder = Files.createDirectory(tmp.resolve("folder.edge"));
    assertRefused(run(new String[] {folder.toString()}, ""), folder + ": is a folder, not a bundle file");
    assertRefused(run(new String[] {tmp.resolve("none.edge").toString()}, ""), tmp.resolve("none.edge") + ": no such file");
    assertRefused(run(new String[] {""}, ""), ": is a folder"); // the empty name is the working folder
    Path locked = tmp.resolve("locked.edge");
    Files.copy(file, locked);
    locked.toFile().setReadable(false, false);
    if (!Files.isReadable(locked)) assertRefused(run(new String[] {locked.toString()}, ""), locked + ": permission denied"); // not as root
    Path empty = Files.createFile(tmp.resolve("empty.edge"));
    assertRefused(run(new String[] {empty.toString()}, ""), empty + ": the file is empty (0 bytes), not a bundle");
    Path cut = tmp.resolve("cut.edge");
    Files.write(cut, Arrays.copyOf(Files.readAllBytes(file), 100));
    assertRefused(run(new String[] {cut.toString()}, ""), cut + ": CRC32 mismatch");
    // options
    assertRefused(run(new String[] {}, ""), "no bundle file given; usage:");
    assertRefused(run(new String[] {file.toString(), "--input"}, ""), "option or argument '--input' not understood");
    assertRefused(run(new String[] {file.toString(), file.toString()}, ""), "option or argument");
    assertThat(run(new String[] {"--inputs", file.toString()}, "0.5,2,3\n").code).isZero(); // either order
    // a header line (pandas' column numbers, or names) is skipped with a note, and the rows after it are
    // numbered from 0: the column numbers were scored as an input row 0 (exit 0), names refused
    Run plain = run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1,2,3\n");
    for (String header : List.of("0,1,2", "a,b,c", "\"x 0\",y,z")) {
      Run h = run(new String[] {file.toString(), "--inputs"}, header + "\n0.5,2,3\n1,2,3\n");
      assertThat(h.code).as(header + ": " + h.err).isZero();
      assertThat(h.out).as(header).isEqualTo(plain.out);
      assertThat(h.err).as(header).contains("note: stdin line 1 taken as a header");
    }
    assertThat(plain.err).isEmpty();
    // a UTF-8 byte order mark before the first line is skipped, as the index's CSV reader skips it
    for (String header : List.of("", "0,1,2\n", "a,b,c\r\n")) {
      Run bom = run(new String[] {file.toString(), "--inputs"}, "\uFEFF" + header + "0.5,2,3\n1,2,3\n");
      assertThat(bom.code).as(header + ": " + bom.err).isZero();
      assertThat(bom.out).as(header).isEqualTo(plain.out);
    }
    Run codes = run(new String[] {file.toString()}, "0".repeat(70) + "\n");
    assertThat(run(new String[] {file.toString()}, "\uFEFF" + "0".repeat(70) + "\n").out).isEqualTo(codes.out);
    // pandas' header over a row-index column (an empty first cell) is a header too, with a hint, as the index reads it
    Run indexed = run(new String[] {file.toString(), "--inputs"}, ",0,1\n0.5,2,3\n1,2,3\n");
    assertThat(indexed.out).as(indexed.err).isEqualTo(plain.out);
    assertThat(indexed.err).contains("hint: column 0 looks like a row index (header cell '')").hasLineCount(1);
    assertThat(run(new String[] {"--help"}, "").out).startsWith("usage: java -jar actindex-edge.jar BUNDLE");
    // rows of the wrong width or content, as codes and as inputs
    String ok = "0".repeat(70);
    assertRefused(run(new String[] {file.toString()}, ok + "\n" + "0".repeat(69) + "\n"), "stdin line 2 (row 1): 69 bits, the bundle's codes have 70");
    assertRefused(run(new String[] {file.toString()}, ok + "1\n"), "stdin line 1 (row 0): more than the bundle's 70 bits");
    assertRefused(run(new String[] {file.toString()}, "\n"), "stdin line 1 (row 0): 0 bits, the bundle's codes have 70");
    assertRefused(run(new String[] {file.toString()}, "01\u0007" + ok), "stdin line 1 (row 0): character 2: '\\u0007' is not 0 or 1");
    // commas separate cells of one bit: an empty cell is a lost bit, refused even where the count still fits
    String commas = String.join(",", ok.split(""));
    assertThat(run(new String[] {file.toString()}, commas + "\n").out).isEqualTo(codes.out);
    assertRefused(run(new String[] {file.toString()}, commas.substring(0, 4) + "," + commas.substring(4) + "1\n"),
        "stdin line 1 (row 0): character 4: an empty field before this comma");
    assertRefused(run(new String[] {file.toString()}, "," + commas + "\n"), "stdin line 1 (row 0): character 0: an empty field before this comma");
    assertRefused(run(new String[] {file.toString()}, commas.substring(2) + ",\n"), "stdin line 1 (row 0): an empty field after the last comma");
    // a file of another width than the model's (its header's, else row 0's), as ood score words it; a later row by its column
    String model = "but the bundle's model (layer 'a', weight shape [20, 3]) takes 3";
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,2\n"), "stdin line 1 (row 0): rows have 2 values " + model);
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,2,3,5\n"), "stdin line 1 (row 0): rows have 4 values " + model
        + "; one column too many: is one of them the label (scikit-learn's data frames end with 'target') or a row index?");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "\n0.5\n"), "stdin line 2 (row 0): rows have 1 value " + model);
    // np.savetxt's default delimiter: the first line is one text cell, a header of one column
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1 2 3\n4 5 6\n"), "stdin line 1, the header: rows have 1 value " + model
        + "; it holds numbers separated by spaces, but cells are separated by commas: write the rows with delimiter=','");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "x,y\n1,2,3\n"), "stdin line 1, the header: rows have 2 values " + model);
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "id,x,y,z\n0,1,2,3\n"), "stdin line 1, the header: rows have 4 values " + model
        + "; one column too many: is one of them the label (scikit-learn's data frames end with 'target') or a row index? (first column 'id', last 'z')");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1,2\n"), "stdin line 2 (row 1), column 2 (0-based): only 2 fields (expected 3, the model's inputs)");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "x,y,z\n0.5,2,3,5\n"), "stdin line 2 (row 0), column 3 (0-based): too many fields (expected 3, the model's inputs)");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1,,3\n"), "stdin line 2 (row 1), column 1 (0-based): empty field");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,x\u001b[31m,3\n"), "stdin line 1, column 1 (0-based): 'x\\u001b[31m' is text but other cells of the line are numbers");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,NaN,3\n"), "stdin line 1 (row 0), column 1 (0-based): value is 'NaN'; only finite numbers are accepted");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,-Infinity,3\n"), "stdin line 1 (row 0), column 1 (0-based): value is '-Infinity'; only finite numbers are accepted");
    // Java's parser takes these, the index's CSV reader does not: neither does the edge reader
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1,2f,3\n"), "stdin line 2 (row 1), column 1 (0-based): '2f' is not a number");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1,2,3d\n"), "stdin line 2 (row 1), column 2 (0-based): '3d' is not a number");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n0x1p3,2,3\n"), "stdin line 2 (row 1), column 0 (0-based): '0x1p3' is not a number");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "1,2,1e999\n"), "stdin line 1 (row 0), column 2 (0-based): value is '1e999'; only finite numbers are accepted");
    assertRefused(run(new String[] {file.toString(), "--inputs"}, "0.5,2,3\n1.7e308,1.7e308,1.7e308\n"), "stdin line 2 (row 1): layer a, unit ");
  }

  /**
   * Raw inputs read as the index's CSV reader reads them under --header auto (ood score refuses the
   * same files): a header with no row after it (a one-line semicolon-separated file is one text
   * cell, so a header) was scored as no rows with exit 0; a first line that may be a header or data
   * was scored as data; blank lines, which the index skips, were refused as rows.
   */
  @Test
  void rawInputsAreReadAsTheIndexReadsACsvFile() throws Exception {
    EdgeBundle b = random(13, 20, 70, EdgeBundle.Statistic.KTH, 6, true);
    Path file = tmp.resolve("m.edge");
    Files.write(file, BundleFormat.toBytes(b));
    String[] in = {file.toString(), "--inputs"};
    assertRefused(run(in, "0.1;0.2;0.3\n"), "stdin has a header but no rows (line 1 taken as the header: column names, not numbers); it holds"
        + " numbers separated by semicolons, but cells are separated by commas");
    assertRefused(run(in, "\n\na,b,c\n\n"), "stdin has a header but no rows (line 3 taken as the header: column names, not numbers)");
    // one text cell, so a header of one column: refused for its width, as ood score refuses it, with the separator hint
    assertRefused(run(in, "0.1;0.2;0.3\n0.4;0.5;0.6\n"), "stdin line 1, the header: rows have 1 value but the bundle's model (layer 'a', weight shape"
        + " [20, 3]) takes 3; it holds numbers separated by semicolons");
    assertRefused(run(in, "0.1,0.2,0.3\n1,2,3\n"), "stdin line 1 holds the evenly spaced numbers 0.1, 0.2, ..., 0.3, more like column names");
    assertRefused(run(in, "3,2,1\n"), "put a line of column names before it if it is data");
    assertRefused(run(in, "0,1\n"), "stdin line 1 holds 0, 1, the column numbers a data-frame library writes over unnamed columns, or a row of data");
    assertRefused(run(in, "0\n"), "(with 1 column either is likely)");
    Run plain = run(in, "0.5,2,3\n1,2,3\n");
    assertThat(plain.code).as(plain.err).isZero();
    for (String text : List.of("\n0.5,2,3\n \n1,2,3\n\n", "a,b,c\n\n0.5,2,3\n1,2,3\n", "\uFEFF\n0,1,2\n0.5,2,3\n\t\n1,2,3\n", "x,y,z\n0.5,2,3\n1,2,3\n")) {
      Run r = run(in, text);
      assertThat(r.code).as(text + ": " + r.err).isZero();
      assertThat(r.out).as(text).isEqualTo(plain.out);
    }
    assertRefused(run(new String[] {file.toString()}, "0".repeat(70) + "\n\n"), "stdin line 2 (row 1): 0 bits"); // codes: a blank line stays a refused row
    // empty input, lines ending in CR alone and bad quotes are refused, as the index refuses such a file; quoted numbers are numbers
    assertRefused(run(in, ""), "stdin is empty: no rows (blank lines are skipped)");
    assertRefused(run(in, "\n \n"), "stdin is empty: no rows (blank lines are skipped)");
    assertRefused(run(new String[] {file.toString()}, ""), "stdin is empty: no rows");
    assertRefused(run(in, "0.5,2,3\r1,2,3\r"), "stdin byte 7 (line 1): a carriage return inside a line: the lines end in CR alone");
    assertRefused(run(in, "0.5,2,3\n1,2\r3\n"), "stdin byte 11 (line 2): a carriage return inside a line");
    assertThat(run(in, "0.5,2,3\r\n1,2,3\r").out).isEqualTo(plain.out);
    assertThat(run(in, "\"a\",\"b,c\",d\n\"0.5\",\"2\",\"3\"\n1, \"2\" ,3\n").out).isEqualTo(plain.out);
    assertRefused(run(in, "0.5,\"2,3\n"), "stdin line 1, column 1 (0-based): a quoted cell is not closed on its line");
    assertRefused(run(in, "0.5,2,3\n0.5,\"2,3\n"), "stdin line 2 (row 1), column 1 (0-based): a quoted cell is not closed on its line");
    assertRefused(run(in, "0.5,2,3\n0.5,\"2\"0,3\n"), "stdin line 2 (row 1), column 1 (0-based): text after a closing quote");
    assertRefused(run(in, "\"a\"b,c,d\n0.5,2,3\n"), "stdin line 1, column 0 (0-based): text after a closing quote");
  }

  /**
   * Column 0 counting 0, 1, 2 (or 1, 2, 3) in rows 0 to 2 is told as a row index, as the index's CSV
   * reader tells it (the edge jar told only a row-index header cell), on the header note's line when
   * there is one; the note waits for row 2 (or the end), so a refusal before that stays one line.
   */
  @Test
  void aCountingColumnZeroIsToldAsARowIndex() throws Exception {
    Path file = tmp.resolve("m.edge");
    Files.write(file, BundleFormat.toBytes(random(14, 20, 70, EdgeBundle.Statistic.KTH, 6, true)));
    String[] in = {file.toString(), "--inputs"};
    String hint = "; it is read as data: write the rows without it (e.g. to_csv(index=False)) if it is not an input\n";
    assertThat(run(in, "0,2,3\n1,2,3\n2,5,6\n3,1,1\n").err).isEqualTo("note: hint: column 0 looks like a row index (values 0, 1, ...)" + hint);
    assertThat(run(in, "1,2,5\n2,2,3\n").err).isEqualTo("note: hint: column 0 looks like a row index (values 1, 2, ...)" + hint);
    assertThat(run(in, ",a,b\n0,2,3\n1,2,3\n").err).isEqualTo("note: stdin line 1 taken as a header and skipped (column names, not numbers);"
        + " row 0 is the next line; hint: column 0 looks like a row index (header cell '', values 0, 1, ...)" + hint);
    for (String notCounting : List.of("0,2,3\n", "0,2,3\n2,2,3\n", "2,2,3\n3,2,3\n", "0,2,3\n1,2,3\n3,5,6\n", "0.0,2,3\n1,2,3\n"))
      assertThat(run(in, notCounting).err).as(notCounting).isEmpty();
    assertRefused(run(in, "a,b,c\n0,2,3\n1,x,3\n"), "stdin line 3 (row 1), column 1 (0-based): 'x' is not a number");
  }

  /**
   * A stream without a line end is refused once a line passes 64 MiB, not read on until memory runs
   * out; bytes that are not UTF-8 and NUL bytes are refused naming the byte (they were read as text:
   * a Latin-1 header skipped, a row's NUL trimmed away).
   */
  @Test
  void standardInputIsReadAsUtf8LinesOfAtMost64MiB() throws Exception {
    Path file = tmp.resolve("m.edge");
    Files.write(file, BundleFormat.toBytes(random(15, 20, 70, EdgeBundle.Statistic.KTH, 6, true)));
    long[] served = {0};
    java.io.InputStream ones = new java.io.InputStream() { // 2 x 64 MiB of '1', no line end, never held in memory whole
      @Override
      public int read() {
        if (served[0] >= 2L * RowText.MAX_LINE_BYTES) return -1;
        served[0]++;
        return '1';
      }

      @Override
      public int read(byte[] b, int off, int len) {
        int n = (int) Math.min(len, 2L * RowText.MAX_LINE_BYTES - served[0]);
        if (n <= 0) return -1;
        Arrays.fill(b, off, off + n, (byte) '1');
        served[0] += n;
        return n;
      }
    };
    for (String[] args : List.of(new String[] {file.toString()}, new String[] {file.toString(), "--inputs"})) {
      served[0] = 0;
      ByteArrayOutputStream err = new ByteArrayOutputStream();
      assertThat(EdgeMain.run(args, ones, new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8),
          new PrintStream(err, true, StandardCharsets.UTF_8))).isEqualTo(2);
      assertThat(err.toString(StandardCharsets.UTF_8)).isEqualTo("stdin line 1 is longer than 64 MiB\n");
      assertThat(served[0]).isLessThanOrEqualTo(RowText.MAX_LINE_BYTES + (1 << 16)); // stopped within one buffer of the limit
    }
    String[] in = {file.toString(), "--inputs"};
    assertRefused(run(in, "caf\u00e9,b,c\n0.5,2,3\n", StandardCharsets.ISO_8859_1),
        "stdin byte 3 (line 1): a byte sequence that is not UTF-8 (e.g. Latin-1 text); write the rows as UTF-8");
    assertRefused(run(in, "0.5,2,3\n1,2,3\0\n", StandardCharsets.UTF_8), "stdin byte 13 (line 2): a NUL byte: the rows look like UTF-16 or binary");
    assertRefused(run(in, "0.5,2,3\n", StandardCharsets.UTF_16), "stdin byte 0 (line 1): a UTF-16 byte order mark: write the rows as UTF-8");
    assertRefused(run(new String[] {file.toString()}, "0".repeat(70) + "\n", StandardCharsets.UTF_16LE), "stdin byte 1 (line 1): a NUL byte");
  }

  /**
   * Damage that keeps the CRC right (a writer bug, or a crafted file): every field change is refused
   * as a bad bundle (exit 2, one line naming the file) or read as another valid bundle, never an
   * internal error.
   */
  @Test
  void commandLineRefusesCrcConsistentDamage() throws Exception {
    EdgeBundle b = random(12, 6, 70, EdgeBundle.Statistic.MEAN, 6, true);
    byte[] bytes = BundleFormat.toBytes(b);
    Path file = tmp.resolve("x.edge");
    SplittableRandom rnd = new SplittableRandom(12);
    int refused = 0;
    for (int rep = 0; rep < 600; rep++) {
      byte[] bad = bytes.clone();
      int pos = 8 + rnd.nextInt(bytes.length - 12);
      if (rep % 2 == 0) bad[pos] ^= (byte) (1 << rnd.nextInt(8));
      else for (int i = 0; i < 4 && pos + i < bytes.length - 4; i++) bad[pos + i] = (byte) (rep % 4 == 1 ? 0xff : 0x7f); // 0xffffffff: a NaN float
      java.util.zip.CRC32 crc = new java.util.zip.CRC32();
      crc.update(bad, 0, bad.length - 4);
      java.nio.ByteBuffer.wrap(bad, bad.length - 4, 4).putInt((int) crc.getValue());
      Files.write(file, bad);
      Run r = run(new String[] {file.toString()}, "0".repeat(70) + "\n"); // empty input is refused: one row to score
      assertThat(r.code).as("byte " + pos + " rep " + rep + ": " + r.err).isIn(0, 2);
      if (r.code == 2 && !r.err.startsWith("stdin line 1 (row 0): ")) { // a row refused: the bundle was read (as one of another width)
        refused++;
        assertThat(r.err).as("byte " + pos).startsWith(file + ": ").hasLineCount(1);
      }
    }
    assertThat(refused).isGreaterThan(50); // most bytes are model weights: a changed finite weight is another valid model
  }

  private static void assertRefused(Run r, String expected) {
    assertThat(r.code).as(r.err).isEqualTo(2);
    assertThat(r.err).contains(expected).hasLineCount(1);
  }

  record Run(int code, String out, String err) {}

  static Run run(String[] args, String stdin) {
    return run(args, stdin, StandardCharsets.UTF_8);
  }

  static Run run(String[] args, String stdin, java.nio.charset.Charset charset) {
    ByteArrayOutputStream out = new ByteArrayOutputStream(), err = new ByteArrayOutputStream();
    int code = EdgeMain.run(args, new ByteArrayInputStream(stdin.getBytes(charset)), new PrintStream(out, true, StandardCharsets.UTF_8),
        new PrintStream(err, true, StandardCharsets.UTF_8));
    return new Run(code, out.toString(StandardCharsets.UTF_8), err.toString(StandardCharsets.UTF_8));
  }
}
