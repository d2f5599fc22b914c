package io.actindex.core;

/**
 * Which loops {@link ScanKernel} runs, chosen once when this class loads: {@link #VECTOR} when the
 * system property {@code actindex.simd} is {@code true} and {@link #vectorUsable()}; {@link
 * #SCALAR} otherwise (the default). Once compiled, the vector loops take 0.25-0.7x the scalar
 * loops' time on the plain scan (1.4-4x faster; widths of 3 words stay scalar), but a JVM spends about half a second of interpreted and C1 code before the JIT has
 * compiled them, which a one-shot command never earns back (docs/benchmarks.md, "Vector API
 * loops"): they are for long runs (a large {@code dupes}, a server, batches of queries), e.g.
 * {@code ACTINDEX_JAVA_OPTS=-Dactindex.simd=true bin/actindex ...}. Either way the results are
 * the same. One caller runs long enough to repay them whatever the property says: the all-codes
 * nearest-other pass of {@code report} ({@code NearestOthers} in the index module) takes {@link
 * #VECTOR} wherever {@link #vectorUsable()}, from 20,000 distinct codes.
 */
public enum Loops {
  /** {@code Long.bitCount}, one code at a time: the reference, always usable. */
  SCALAR,
  /** {@link VectorKernel}: 512-bit vectors, eight 64-bit lanes per step. */
  VECTOR;

  /** The loops of this JVM. */
  public static final Loops CHOSEN = Boolean.getBoolean("actindex.simd") && vectorUsable() ? VECTOR : SCALAR;

  /**
   * Whether {@link #VECTOR} can run here: the JVM has the module {@code jdk.incubator.vector}
   * (started with {@code --add-modules jdk.incubator.vector}, as {@code bin/actindex} does) and
   * 512-bit long vectors (AVX-512 on x86; a smaller preferred species, e.g. AVX2, keeps the
   * scalar loops). Without the module {@link VectorKernel} is never loaded.
   */
  public static boolean vectorUsable() {
    return ModuleLayer.boot().findModule("jdk.incubator.vector").isPresent() && VectorKernel.available();
  }
}
