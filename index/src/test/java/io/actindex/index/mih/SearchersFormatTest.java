package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.BruteForce;
import io.actindex.core.CodeBlock;
import io.actindex.core.CodeSearcher;
import io.actindex.core.Randoms;
import io.actindex.core.SyntheticCodes;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The tables payload: round trip, and damaged or mismatched payloads never answer wrongly. */
class SearchersFormatTest {

  static byte[] write(CodeSearcher s) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    Searchers.write(s, new DataOutputStream(bytes));
    return bytes.toByteArray();
  }

  static CodeSearcher read(byte[] payload, CodeBlock codes) throws IOException {
    return Searchers.read(new DataInputStream(new ByteArrayInputStream(payload)), codes);
  }

  @Test
  void roundTripKeepsPlanTablesAndAnswers() throws IOException {
    for (int rep = 0; rep < 8; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      CodeBlock codes = rep % 2 == 0
          ? SyntheticCodes.reluLike(200 + rnd.nextInt(2000), 40 + rnd.nextInt(80), 20 + rnd.nextInt(60), seed).codes()
          : SyntheticCodes.uniform(rnd.nextInt(3000), 1 + rnd.nextInt(400), seed);
      CodeSearcher s = Searchers.build(codes, MihExactnessTest.options(rep, rnd));
      byte[] payload = write(s);
      CodeSearcher back = read(payload, codes);
      assertEquals(Searchers.stats(s), Searchers.stats(back), Randoms.describe(seed));
      assertTrue(Arrays.equals(payload, write(back)), Randoms.describe(seed) + " rewrite differs");
      MihExactnessTest.checkAll(codes, back, rnd, seed, 2);
    }
  }

  @Test
  void everySingleByteFlipIsRejectedOrHarmless() throws IOException {
    long seed = Randoms.seed(99);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock codes = SyntheticCodes.reluLike(60, 24, 16, seed).codes();
    CodeSearcher s = Searchers.build(codes, SearchPlanOptions.defaults().withSubstrings(4));
    byte[] payload = write(s);
    long[][] queries = new long[8][];
    for (int i = 0; i < queries.length; i++) queries[i] = MihExactnessTest.query(codes, rnd);
    int rejected = 0;
    for (int pos = 0; pos < payload.length; pos++) {
      byte[] bad = payload.clone();
      bad[pos] ^= (byte) (1 << rnd.nextInt(8));
      CodeSearcher back;
      try {
        back = read(bad, codes);
      } catch (BadInputException | EOFException e) {
        rejected++;
        continue;
      }
      // a flip the format cannot see (e.g. the strategy id) must still answer exactly
      for (long[] q : queries) {
        assertEquals(BruteForce.knn(codes, q, 5, null, null), back.knn(q, 5), Randoms.describe(seed) + " flip at " + pos);
        assertEquals(BruteForce.radius(codes, q, 6, null, null), back.radius(q, 6), Randoms.describe(seed) + " flip at " + pos);
      }
    }
    assertTrue(rejected > payload.length * 9 / 10, "only " + rejected + " of " + payload.length + " flips rejected");
  }

  @Test
  void truncatedPayloadFails() throws IOException {
    CodeBlock codes = SyntheticCodes.uniform(500, 96, Randoms.seed(1));
    byte[] payload = write(Searchers.build(codes));
    for (int len : new int[] {0, 3, 20, payload.length / 2, payload.length - 1})
      assertThrows(EOFException.class, () -> read(Arrays.copyOf(payload, len), codes), "length " + len);
  }

  @Test
  void payloadOfOtherCodesIsRejected() throws IOException {
    CodeBlock codes = SyntheticCodes.uniform(500, 96, Randoms.seed(2));
    byte[] payload = write(Searchers.build(codes));
    BadInputException e = assertThrows(BadInputException.class, () -> read(payload, codes.slice(0, 499)));
    assertTrue(e.getMessage().contains("code count"), e.getMessage());
    assertThrows(BadInputException.class, () -> read(payload, SyntheticCodes.uniform(500, 97, 1)));
    // same shape, other content: some code sits in the wrong bucket
    e = assertThrows(BadInputException.class, () -> read(payload, SyntheticCodes.uniform(500, 96, Randoms.seed(3))));
    assertTrue(e.getMessage().startsWith("search tables payload:"), e.getMessage());
  }
}
