package io.actindex.core;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import java.util.SplittableRandom;
import java.util.TreeSet;
import org.junit.jupiter.api.Test;

/** {@link IdSet} against java.util.TreeSet: members, counts, windows at any bit offset, and/andNot. */
class IdSetTest {

  @Test
  void agreesWithATreeSet() {
    for (int rep = 0; rep < 50; rep++) {
      long seed = Randoms.seed(rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int size = rnd.nextInt(400);
      TreeSet<Integer> a = new TreeSet<>(), b = new TreeSet<>();
      for (int i = 0; i < size; i++) {
        if (rnd.nextInt(3) == 0) a.add(i);
        if (rnd.nextBoolean()) b.add(i);
      }
      IdSet sa = IdSet.of(size, a.stream().mapToInt(Integer::intValue).toArray());
      IdSet sb = IdSet.of(size, b.stream().mapToInt(Integer::intValue).toArray());
      String why = Randoms.describe(seed);
      assertEquals(a.size(), sa.count(), why);
      assertArrayEquals(a.stream().mapToInt(Integer::intValue).toArray(), sa.toArray(), why);
      TreeSet<Integer> and = new TreeSet<>(a), andNot = new TreeSet<>(a);
      and.retainAll(b);
      andNot.removeAll(b);
      assertArrayEquals(and.stream().mapToInt(Integer::intValue).toArray(), sa.and(sb).toArray(), why);
      assertArrayEquals(andNot.stream().mapToInt(Integer::intValue).toArray(), sa.andNot(sb).toArray(), why);
      int from = size == 0 ? 0 : rnd.nextInt(size), len = rnd.nextInt(size - from + 1);
      IdSet win = sa.window(from, len);
      int[] expected = a.subSet(from, from + len).stream().mapToInt(i -> i - from).toArray();
      assertArrayEquals(expected, win.toArray(), why + " window " + from + "+" + len);
      assertEquals(expected.length, win.count(), why);
      for (int i = -1; i <= len; i++) assertEquals(a.contains(from + i) && i >= 0 && i < len, win.contains(i), why + " " + i);
      assertEquals(size, IdSet.all(size).count(), why);
    }
  }

  /**
   * Blocks of members ({@link IdSet#next}) from any start, in blocks of any length, on whole sets and
   * on windows at any bit offset (aligned or not), sparse and dense: together the TreeSet's tail.
   */
  @Test
  void blocksOfMembersAgreeWithATreeSet() {
    for (int rep = 0; rep < 200; rep++) {
      long seed = Randoms.seed(1000 + rep);
      SplittableRandom rnd = new SplittableRandom(seed);
      int size = 1 + rnd.nextInt(700);
      double share = rnd.nextInt(3) == 0 ? 0.01 : rnd.nextDouble();
      TreeSet<Integer> a = new TreeSet<>();
      for (int i = 0; i < size; i++) if (rnd.nextDouble() < share) a.add(i);
      IdSet set = IdSet.of(size, a.stream().mapToInt(Integer::intValue).toArray());
      int wFrom = rnd.nextBoolean() ? 0 : rnd.nextBoolean() ? 64 * rnd.nextInt(size / 64 + 1) : rnd.nextInt(size);
      int wLen = rnd.nextInt(size - wFrom + 1);
      IdSet win = set.window(wFrom, wLen);
      TreeSet<Integer> inWin = new TreeSet<>();
      for (int i : a.subSet(wFrom, wFrom + wLen)) inWin.add(i - wFrom);
      int start = wLen == 0 ? 0 : rnd.nextInt(wLen + 1);
      int[] block = new int[1 + rnd.nextInt(40)];
      java.util.List<Integer> got = new java.util.ArrayList<>();
      for (int from = start, m; (m = win.next(from, block)) > 0; from = block[m - 1] + 1) {
        for (int j = 0; j < m; j++) got.add(block[j]);
        if (m < block.length) {
          assertEquals(0, win.next(block[m - 1] + 1, block), Randoms.describe(seed) + ": a short block is the last");
          break;
        }
      }
      assertEquals(java.util.List.copyOf(inWin.tailSet(start)), got,
          Randoms.describe(seed) + " window " + wFrom + "+" + wLen + " from " + start + " block " + block.length);
    }
  }

  @Test
  void refusesBitsPastTheSize() {
    assertThrows(IllegalArgumentException.class, () -> IdSet.of(new long[] {1L << 10}, 10));
    assertThrows(IllegalArgumentException.class, () -> IdSet.of(10, 10));
  }
}
