package io.actindex.core;

import org.junit.jupiter.api.extension.BeforeEachCallback;
import org.junit.jupiter.api.extension.ExtensionContext;
import org.junit.jupiter.api.extension.LifecycleMethodExecutionExceptionHandler;
import org.junit.jupiter.api.extension.TestExecutionExceptionHandler;

/**
 * For every failure of a randomized test (one that took a seed from {@link Randoms#seed(int)}),
 * whatever was thrown (an assertion, or an exception from the code under test), prints the line
 * that repeats the run on stderr and attaches it to the failure as a suppressed exception, so it
 * shows in the test report next to the stack trace.
 *
 * <p>Registered for every module whose tests use core's test-jar by JUnit's extension
 * autodetection: {@code META-INF/services/org.junit.jupiter.api.extension.Extension} and {@code
 * junit.jupiter.extensions.autodetection.enabled=true} in {@code junit-platform.properties}, both in
 * core's test resources (so in the test-jar).
 */
public final class SeedReporter implements BeforeEachCallback, TestExecutionExceptionHandler, LifecycleMethodExecutionExceptionHandler {
  private static final ExtensionContext.Namespace NS = ExtensionContext.Namespace.create(SeedReporter.class);

  /** The reproduce line, attached to a failure. */
  static final class Reproduce extends RuntimeException {
    Reproduce(String line) {
      super(line, null, false, false);
    }
  }

  @Override
  public void beforeEach(ExtensionContext context) {
    context.getStore(NS).put("seeds", Randoms.handedOut());
  }

  @Override
  public void handleTestExecutionException(ExtensionContext context, Throwable failure) throws Throwable {
    throw report(context, failure);
  }

  @Override
  public void handleAfterEachMethodExecutionException(ExtensionContext context, Throwable failure) throws Throwable {
    throw report(context, failure);
  }

  private static Throwable report(ExtensionContext context, Throwable failure) {
    Long before = context.getStore(NS).get("seeds", Long.class);
    if (before == null || Randoms.handedOut() == before) return failure; // not randomized: nothing to repeat
    String line = line(context);
    for (Throwable s : failure.getSuppressed()) if (s instanceof Reproduce) return failure;
    System.err.println(line);
    failure.addSuppressed(new Reproduce(line));
    return failure;
  }

  /** {@code REPRODUCE WITH: mvn ... -Dtest=Class#method -Dtests.seed=HEX}. */
  static String line(ExtensionContext context) {
    String test = context.getRequiredTestClass().getSimpleName() + context.getTestMethod().map(m -> "#" + m.getName()).orElse("");
    return "REPRODUCE WITH: bin/test -Dtest='" + test + "' -Dsurefire.failIfNoSpecifiedTests=false -Dtests.seed="
        + Long.toHexString(Randoms.base());
  }
}
