package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import io.actindex.edge.EdgeBundle;
import io.actindex.encode.BinarizeRule;
import io.actindex.encode.EncodeOptions;
import io.actindex.query.stats.Assignment;
import io.actindex.query.stats.FloatSample;
import io.actindex.query.stats.Frechet;
import io.actindex.query.stats.LinearMmd;
import io.actindex.query.stats.NeverSeenBound;
import io.actindex.query.stats.Sinkhorn;
import io.actindex.query.stats.StudentT;
import io.actindex.query.stats.Wasserstein;
import java.nio.file.Path;
import org.assertj.core.api.ThrowableAssert.ThrowingCallable;
import org.junit.jupiter.api.Test;

/**
 * The {@code Params} records refuse a bad value as a {@link BadParameterException} led by the Java
 * parameter's name, never an option (DEVELOPERS.md, "Writing a message").
 */
class ParamsRefusalsTest {
  private static final Path DIR = Path.of("idx");
  private static final Source IN = Source.activations(Path.of("a.npy"));

  @Test
  void aBadValueIsRefusedByItsJavaName() {
    refused("radius", () -> new Region.Params(-1, null, null, 5));
    refused("examples", () -> new Region.Params(2, null, null, -1));
    refused("k", () -> new Nearest.Params(0, null, null, 1));
    refused("threads", () -> new Nearest.Params(5, null, null, 0));
    refused("k", () -> new Refine.Params(0, 10, Refine.Metric.COSINE, null, null, 1));
    refused("candidates", () -> new Refine.Params(5, 0, Refine.Metric.COSINE, null, null, 1));
    refused("candidates", () -> new Refine.Params(5, 3, Refine.Metric.COSINE, null, null, 1));
    refused("threads", () -> new Refine.Params(5, 10, Refine.Metric.COSINE, null, null, 0));
    refused("queries", () -> new Fidelity.Params(0, 5, 10, 100, 1, 1));
    refused("k", () -> new Fidelity.Params(10, 0, 10, 100, 1, 1));
    refused("candidates", () -> new Fidelity.Params(10, 5, 4, 100, 1, 1));
    refused("pairs", () -> new Fidelity.Params(10, 5, 10, 1, 1, 1));
    refused("threads", () -> new Fidelity.Params(10, 5, 10, 100, 1, 0));
    refused("threads", () -> new Dupes.Params(2, null, null, false, false, 5, 0));
    refused("threads", () -> new Report.Params(Path.of("r.html"), null, null, null, null, null, null, 0));
    refused("threads", () -> new OodScore.Params(0, OodScorer.Kind.CODE, 0));
    refused("threads", () -> new OodCalibrate.Params(5, EdgeBundle.Statistic.values()[0], 0.95, null, false, OodScorer.Kind.CODE, 0, 0));
    refused("threads", () -> new OodEval.Params(IN, IN, null, null, null, 0, OodScorer.Kind.CODE, 0, null));
    refused("candidates", () -> new OodCalibrate.Params(5, EdgeBundle.Statistic.values()[0], 0.95, null, false, OodScorer.Kind.CODE, -1, 1));
    refused("candidates", () -> new OodEval.Params(IN, IN, null, null, null, -1, OodScorer.Kind.CODE, 1, null));
    refused("largest", () -> new Census.Params(null, -1, 0));
    refused("examples", () -> new Census.Params(null, 0, -1));
    refused("threads", () -> new Compact.Params(DIR, -1));
    refused("threads", () -> new IndexBuilder.AddParams(DIR, IN, null, 0, -1));
    refused("threads", () -> new IndexBuilder.BuildParams(DIR, IN, null, null, null, 0, -1, -1));
    refused("magnitudeBits", () -> new IndexBuilder.BuildParams(DIR, IN, null, null, null, 0, 3));
    refused("skipMissing", () -> new Delete.Params(DIR, null, "split = test", true));
    refused("threshold", () -> new EncodeOptions(BinarizeRule.POSITIVE, Double.NaN, null));
    refused("model", () -> new Source(Source.Kind.ACTIVATIONS, Path.of("a.npy"), Path.of("m.safetensors")));
    refused("kindFromIndex", () -> new Compare.Sample(null, "split = test", true));
  }

  @Test
  void theStatisticsNameTheArgumentTheyRefuse() {
    CodeBlock three = SyntheticCodes.uniform(3, 16, 1), four = SyntheticCodes.uniform(4, 16, 2);
    FloatSample twoCols = new FloatSample(2, 2, new double[4]), threeCols = new FloatSample(2, 3, new double[6]);
    refused("a", () -> LinearMmd.of(three, four, d -> Math.exp(-d), 1));
    refused("b", () -> LinearMmd.of(four, three, d -> Math.exp(-d), 1));
    refused("b", () -> Wasserstein.exact(four, three, 1));
    refused("b", () -> Frechet.squared(twoCols, threeCols));
    refused("values", () -> new FloatSample(2, 2, new double[3]));
    refused("cost", () -> Assignment.solve(2, new long[3]));
    refused("epsilon", () -> Sinkhorn.solve(1, 1, new char[1], new double[1], 0, 10, 1e-6, 1));
    refused("df", () -> StudentT.upperTail(1, 0));
    refused("rate", () -> NeverSeenBound.examplesFor(1));
  }

  @Test
  void deleteNeedsExactlyOneOfKeysFileAndWhere() {
    for (ThrowingCallable c : new ThrowingCallable[] {
        () -> new Delete.Params(DIR, null, null), () -> new Delete.Params(DIR, Path.of("keys.txt"), "split = test")})
      assertThatThrownBy(c).isInstanceOf(BadInputException.class)
          .hasMessageContaining("`keysFile`").hasMessageContaining("`where`").message().doesNotContain("--");
  }

  private static void refused(String parameter, ThrowingCallable call) {
    assertThatThrownBy(call).as(parameter).isInstanceOfSatisfying(BadParameterException.class, e -> {
      assertThat(e.parameter()).as(e.getMessage()).isEqualTo(parameter);
      assertThat(e.getMessage()).startsWith(parameter).doesNotContain("--");
    });
  }
}
