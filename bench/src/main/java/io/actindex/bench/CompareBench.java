package io.actindex.bench;

import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import io.actindex.query.Compare;
import io.actindex.query.stats.AgreementMmd;
import io.actindex.query.stats.PairDistances;
import io.actindex.query.stats.PermutationTest;
import io.actindex.query.stats.Permutations;
import io.actindex.query.stats.Wasserstein;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * The statistics of {@code compare} on one thread, one call per measurement: two samples of
 * 10,000 ReLU-like 256-bit codes (per-bit firing rates spread over 0.02..0.98, B with a quarter
 * of the neurons shifted by 0.05). {@code mmdAgreement}: MMD^2 with the agreement kernel and 1000
 * permutations on all 20,000 rows; {@code mmdExponential}: the pooled distance matrix of 2,000 +
 * 2,000 rows (the default --matrix-rows), its kernel matrix and 1000 permutations ({@code distances}:
 * the distance pass alone, the baseline of the same run); {@code
 * w2Exact}: exact W2 on 2,000 vs 2,000; {@code w2Sinkhorn}: Sinkhorn on 10,000 vs 10,000 (reg 0.05,
 * at most 1000 iterations, tol 1e-5); {@code compareDefaults}: everything {@code compare} computes on the two
 * samples with its default options (agreement and exponential tests, linear-time MMD, W2 by Sinkhorn
 * on 4,000 + 4,000 rows, neurons).
 */
@State(Scope.Benchmark)
@Fork(value = 1, jvmArgsAppend = {"-Xms2g", "-Xmx6g"})
@Warmup(iterations = 1)
@Measurement(iterations = 3)
@BenchmarkMode(Mode.SingleShotTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
public class CompareBench {
  static final int N = 10_000, BITS = 256, PERMS = 1000;
  CodeBlock a, b, a2k, b2k;

  @Setup
  public void setup() {
    SplittableRandom r = new SplittableRandom(20261203);
    double[] p = new double[BITS];
    for (int i = 0; i < BITS; i++) p[i] = 0.02 + 0.96 * r.nextDouble() * r.nextDouble();
    double[] q = p.clone();
    for (int i = 0; i < BITS / 4; i++) q[i] = Math.min(0.98, p[i] + 0.05);
    a = codes(r, N, p);
    b = codes(r, N, q);
    a2k = a.slice(0, 2000);
    b2k = b.slice(0, 2000);
  }

  static CodeBlock codes(SplittableRandom r, int n, double[] rates) {
    return SyntheticCodes.bernoulli(r, n, rates);
  }

  /** What {@code actindex compare} computes on the two samples with its default options (one thread). */
  @Benchmark
  public Compare.Result compareDefaults() {
    return Compare.compute(a, b, null, null, "A", "B", Compare.Options.defaults());
  }

  @Benchmark
  public PermutationTest mmdAgreement() {
    return new AgreementMmd(a.concat(b), N).test(new int[][] {{0, BITS}}, Permutations.seeded(1), PERMS, 1)[0];
  }

  @Benchmark
  public PermutationTest mmdExponential() {
    PairDistances d = new PairDistances(a2k.concat(b2k), 2000, 1);
    double sigma = Math.max(1, d.median(0));
    return d.kernel(x -> Math.exp(-x / sigma)).test(2000, Permutations.seeded(1), PERMS, 1);
  }

  /** Baseline for mmdExponential: the pooled distance pass alone (popcount-bound). */
  @Benchmark
  public PairDistances distances() {
    return new PairDistances(a2k.concat(b2k), 2000, 1);
  }

  @Benchmark
  public Wasserstein.Result w2Exact() {
    return Wasserstein.exact(a2k, b2k, 1);
  }

  @Benchmark
  public Wasserstein.Result w2Sinkhorn() {
    return Wasserstein.sinkhorn(a, b, 0.05, 1000, 1e-5, 1);
  }
}
