package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.core.Randoms;
import io.actindex.edge.EdgeBundle.Statistic;
import io.actindex.encode.EncodeOptions;
import io.actindex.encode.mlp.Mlp;
import io.actindex.encode.mlp.MlpTrainer;
import io.actindex.index.store.IndexReader;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Far inputs on a small model the project's trainer fits (three Gaussian classes in 10 dimensions,
 * a (24, 16) ReLU network): held-out inputs multiplied by 100 land in outer linear regions, where
 * the activations grow with the factor and their direction settles (common practice: a ReLU network
 * is piecewise linear). The euclidean score, which sees the activations' size, ranks every scaled
 * input above every held-out input and flags them all at its calibrated threshold; the cosine
 * refined score, which drops the size, separates them less well and flags fewer. The AUROCs are
 * counted here pair by pair (the Mann-Whitney count, ties half), not taken from {@link RocMetrics}.
 */
class OodFarInputsTest {
  @TempDir Path tmp;

  @Test
  void scaledInputsScoreHigherUnderTheEuclideanScoreThanUnderTheCosine() throws Exception {
    for (int t = 0; t < 3; t++) {
      long seed = Randoms.seed(t);
      String why = Randoms.describe(seed);
      SplittableRandom rnd = new SplittableRandom(seed);
      int dim = 10, classes = 3;
      double[][] centres = new double[classes][dim];
      for (double[] c : centres) for (int j = 0; j < dim; j++) c[j] = 2 * rnd.nextGaussian();
      List<double[]> train = new ArrayList<>(), cal = new ArrayList<>(), in = new ArrayList<>(), far = new ArrayList<>();
      int[] y = new int[600];
      for (int i = 0; i < 600 + 200 + 200; i++) {
        int c = i % classes;
        double[] x = new double[dim];
        for (int j = 0; j < dim; j++) x[j] = centres[c][j] + rnd.nextGaussian();
        if (i < 600) {
          y[i] = c;
          train.add(x);
        } else if (i < 800) cal.add(x);
        else {
          in.add(x);
          double[] scaled = new double[dim];
          for (int j = 0; j < dim; j++) scaled[j] = 100 * x[j];
          far.add(scaled);
        }
      }
      Mlp mlp = MlpTrainer.train(train.toArray(new double[0][]), y, classes, new MlpTrainer.Config(new int[] {24, 16}, 30, 32, 1e-2, seed));
      Path s = Files.createDirectories(tmp.resolve("s" + t));
      Path model = s.resolve("mlp.safetensors");
      mlp.save(model, null);
      Path dir = s.resolve("idx");
      IndexBuilder.build(new IndexBuilder.BuildParams(dir, Source.inputs(DigitsOodTest.npy(s.resolve("train.npy"), train), model), null,
          EncodeOptions.positive(), null, 0), Progress.NONE);
      Path calFile = DigitsOodTest.npy(s.resolve("cal.npy"), cal), inFile = DigitsOodTest.npy(s.resolve("in.npy"), in),
          farFile = DigitsOodTest.npy(s.resolve("far.npy"), far);
      double[] flagged = new double[2]; // share of the far inputs flagged out: cosine, Euclidean
      OodEval.Result e = null;
      for (OodScorer.Kind kind : List.of(OodScorer.Kind.REFINED, OodScorer.Kind.EUCLIDEAN)) {
        OodCalibrate.run(dir, Source.inputs(calFile, null), RowRange.ALL, new OodCalibrate.Params(1, Statistic.KTH, 0.95, null, false, kind, 0),
            Progress.NONE);
        try (IndexReader r = IndexReader.open(dir)) {
          OodScore.Output o = OodScore.run(r, Source.inputs(farFile, null), RowRange.ALL, new OodScore.Params(0), Progress.NONE);
          flagged[kind == OodScorer.Kind.REFINED ? 0 : 1] = o.results().stream().filter(OodScore.Result::out).count() / (double) far.size();
          e = OodEval.run(r, new OodEval.Params(Source.inputs(inFile, null), Source.inputs(farFile, null), null, null, null), Progress.NONE);
        }
      }
      double cosine = auroc(e.refined().in(), e.refined().out()), euclidean = auroc(e.euclidean().in(), e.euclidean().out());
      System.out.printf(Locale.ROOT, "%s: inputs x100 vs held out: AUROC cosine %.4f, Euclidean %.4f; flagged out cosine %.3f, Euclidean %.3f%n", why,
          cosine, euclidean, flagged[0], flagged[1]);
      double lowestFar = java.util.Arrays.stream(e.euclidean().out()).min().orElseThrow();
      double highestIn = java.util.Arrays.stream(e.euclidean().in()).max().orElseThrow();
      assertThat(lowestFar).as(why + ": every scaled input above every held-out input (Euclidean)").isGreaterThan(highestIn);
      assertThat(euclidean).as(why + ": Euclidean AUROC vs cosine AUROC").isGreaterThan(cosine);
      assertThat(flagged[1]).as(why + ": every scaled input flagged out at the Euclidean threshold").isEqualTo(1.0);
      assertThat(flagged[1]).as(why + ": flagged out, Euclidean vs cosine").isGreaterThan(flagged[0]);
    }
  }

  /** P(out score > in score) + P(equal) / 2 over every (in, out) pair. */
  private static double auroc(double[] in, double[] out) {
    double wins = 0;
    for (double b : out)
      for (double a : in) wins += b > a ? 1 : b == a ? 0.5 : 0;
    return wins / ((double) in.length * out.length);
  }
}
