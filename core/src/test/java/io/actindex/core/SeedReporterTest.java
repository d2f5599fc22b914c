package io.actindex.core;

import static org.assertj.core.api.Assertions.assertThat;
import static org.junit.platform.engine.discovery.DiscoverySelectors.selectClass;

import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.platform.launcher.LauncherDiscoveryRequest;
import org.junit.platform.launcher.core.LauncherDiscoveryRequestBuilder;
import org.junit.platform.launcher.core.LauncherFactory;
import org.junit.platform.launcher.listeners.SummaryGeneratingListener;
import org.junit.platform.launcher.listeners.TestExecutionSummary;

/**
 * Runs sample tests (nested classes, not picked up by the build's own run) through the JUnit
 * launcher with extension autodetection, as the build runs every test, and checks what
 * {@link SeedReporter} attaches to their failures.
 */
class SeedReporterTest {
  /** Samples: randomized tests failing by assertion and by an exception of the "code under test". */
  static class Samples {
    @Test
    void randomizedAssertionFails() {
      SplittableRandom rnd = new SplittableRandom(Randoms.seed(0));
      assertThat(rnd.nextInt(10)).isGreaterThan(100);
    }

    @Test
    void randomizedCodeThrows() {
      int[] a = new int[new SplittableRandom(Randoms.seed(1)).nextInt(5)];
      a[a.length] = 1; // the code under test fails with an exception, not an assertion
    }

    @Test
    void fixedTestFails() {
      throw new IllegalStateException("no seed involved");
    }
  }

  private static List<TestExecutionSummary.Failure> run() {
    LauncherDiscoveryRequest request = LauncherDiscoveryRequestBuilder.request().selectors(selectClass(Samples.class))
        .configurationParameter("junit.jupiter.extensions.autodetection.enabled", "true").build();
    SummaryGeneratingListener listener = new SummaryGeneratingListener();
    LauncherFactory.create().execute(request, listener);
    return listener.getSummary().getFailures();
  }

  private static String reproduce(List<TestExecutionSummary.Failure> failures, String method) {
    Throwable t = failures.stream().filter(f -> f.getTestIdentifier().getDisplayName().startsWith(method)).findFirst()
        .orElseThrow().getException();
    return Arrays.stream(t.getSuppressed()).filter(s -> s instanceof SeedReporter.Reproduce).map(Throwable::getMessage)
        .findFirst().orElse(null);
  }

  @Test
  void everyFailureOfARandomizedTestCarriesTheReproduceLine() {
    List<TestExecutionSummary.Failure> failures = run();
    assertThat(failures).hasSize(3);
    String seed = "-Dtests.seed=" + Long.toHexString(Randoms.base());
    assertThat(reproduce(failures, "randomizedAssertionFails")).contains("Samples#randomizedAssertionFails").endsWith(seed);
    assertThat(reproduce(failures, "randomizedCodeThrows")).contains("Samples#randomizedCodeThrows").endsWith(seed);
    assertThat(reproduce(failures, "fixedTestFails")).isNull();
  }
}
