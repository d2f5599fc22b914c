package io.actindex.core;

/**
 * Which loops {@link ScanKernel} runs, chosen once when this class loads: {@link #VECTOR} when
 * {@link #vectorUsable()} and the system property {@code actindex.simd} is not {@code false};
 * {@link #SCALAR} otherwise. {@code bin/actindex} starts the JVM with {@code --add-modules
 * jdk.incubator.vector}; a library user without it gets the scalar loops (same results).
 */
public enum Loops {
  /** {@code Long.bitCount}, one code at a time: the reference, always usable. */
  SCALAR,
  /** {@link VectorKernel}: eight codes per step over 512-bit vectors. */
  VECTOR;

  /** The loops of this JVM. */
  public static final Loops CHOSEN =
      Boolean.parseBoolean(System.getProperty("actindex.simd", "true")) && vectorUsable() ? VECTOR : SCALAR;

  /**
   * Whether {@link #VECTOR} can run here: the JVM has the module {@code jdk.incubator.vector}
   * (it was started with {@code --add-modules jdk.incubator.vector}) and 512-bit long vectors
   * (AVX-512 on x86; a smaller preferred species, e.g. AVX2, gets the scalar loops).
   */
  public static boolean vectorUsable() {
    return ModuleLayer.boot().findModule("jdk.incubator.vector").isPresent() && VectorKernel.available();
  }
}
