package io.actindex.index.mih;

import static org.assertj.core.api.Assertions.assertThat;
import static org.assertj.core.api.Assertions.assertThatThrownBy;

import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import io.actindex.index.store.Magnitudes;
import io.actindex.index.store.MergePolicy;
import org.assertj.core.api.ThrowableAssert.ThrowingCallable;
import org.junit.jupiter.api.Test;

/**
 * The search structures, the merge policy and the magnitudes refuse a caller's bad value as a {@link BadParameterException} led by the
 * Java parameter's name, never an option (DEVELOPERS.md, "Writing a message").
 */
class ParamsRefusalsTest {
  @Test
  void aBadValueIsRefusedByItsJavaName() {
    CodeBlock codes = SyntheticCodes.uniform(20, 40, 1);
    SearchPlanOptions d = SearchPlanOptions.defaults();
    refused("substrings", () -> d.withSubstrings(-1));
    refused("maxSubstrings", () -> d.withMaxSubstrings(0));
    refused("radius", () -> SelfJoin.build(codes, -1));
    refused("keyParts", () -> SelfJoin.build(codes, 2, -1, SearchPlanOptions.Strategy.AUTO));
    refused("radius", () -> RadiusMatcher.build(codes, -1));
    refused("runs", () -> PlannerCalibration.calibrate(0));
    refused("maxSegmentBytes", () -> new MergePolicy(0, 2, 1));
    refused("mergeFactor", () -> new MergePolicy(1 << 20, 1, 1));
    refused("floorCodes", () -> new MergePolicy(1 << 20, 2, 0));
    refused("maxDeletedShare", () -> new MergePolicy(1 << 20, 2, 1, -0.01));
    refused("maxDeletedShare", () -> new MergePolicy(1 << 20, 2, 1, 1.01));
    refused("maxDeletedShare", () -> new MergePolicy(1 << 20, 2, 1, Double.NaN));
    refused("bits", () -> Magnitudes.quantise(new float[6], 2, 3, 3));
  }

  @Test
  void theLowestValuesAreTaken() {
    SearchPlanOptions o = SearchPlanOptions.defaults().withSubstrings(0).withMaxSubstrings(1);
    assertThat(o.substrings()).isZero();
    assertThat(o.maxSubstrings()).isEqualTo(1);
  }

  private static void refused(String parameter, ThrowingCallable call) {
    assertThatThrownBy(call).as(parameter).isInstanceOfSatisfying(BadParameterException.class, e -> {
      assertThat(e.parameter()).as(e.getMessage()).isEqualTo(parameter);
      assertThat(e.getMessage()).startsWith(parameter).doesNotContain("--");
    });
  }
}
