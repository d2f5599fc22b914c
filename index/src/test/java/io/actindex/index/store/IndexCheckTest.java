package io.actindex.index.store;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.CodeBlock;
import io.actindex.core.Randoms;
import java.io.IOException;
import java.io.RandomAccessFile;
import java.lang.foreign.Arena;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.SplittableRandom;
import java.util.UUID;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Open versus check: with every file counted as big (no CRC at open), a flipped byte in the middle
 * of a codes file can pass opening, but {@link IndexCheck} finds every flipped byte of every file
 * (Lucene's included) and names the file; a sound index checks clean. And the mapped reader reads
 * fields past 2 GiB (a sparse file).
 */
class IndexCheckTest {
  @TempDir Path tmp;

  @AfterEach
  void restore() {
    System.clearProperty(ChecksummedFile.SMALL_FILE_PROPERTY);
  }

  @Test
  void checkFindsEveryFlippedByteThatOpenMaySkip() throws IOException {
    long seed = Randoms.seed(0);
    String why = Randoms.describe(seed);
    SplittableRandom rnd = new SplittableRandom(seed);
    CodeBlock sample = StoreFixtures.sample(seed);
    Path pristine = tmp.resolve("pristine");
    StoreFixtures.build(pristine, sample);
    IndexCheck.Report clean = IndexCheck.run(pristine);
    assertTrue(clean.ok(), why + ": " + clean.firstDamaged());
    long files = StoreFixtures.files(pristine).stream().filter(f -> !f.getFileName().toString().endsWith(".lock")).count();
    assertEquals(files + 1, clean.files().size(), "every file and the cross-check reported: " + clean.files());

    System.setProperty(ChecksummedFile.SMALL_FILE_PROPERTY, "0");
    int trial = 0, passedOpen = 0;
    for (Path file : StoreFixtures.files(pristine)) {
      long size = Files.size(file);
      if (size == 0) continue;
      String rel = pristine.relativize(file).toString();
      for (long pos : new long[] {rnd.nextLong(size), size / 2}) {
        Path copy = tmp.resolve("t" + trial++);
        StoreFixtures.copy(pristine, copy);
        try (RandomAccessFile raf = new RandomAccessFile(copy.resolve(rel).toFile(), "rw")) {
          raf.seek(pos);
          int b = raf.read();
          raf.seek(pos);
          raf.write(b ^ (1 << rnd.nextInt(8)));
        }
        try {
          IndexReader.open(copy).close();
          passedOpen++;
        } catch (io.actindex.core.BadInputException expected) {
          // headers, footers, counts and ranges are still checked at open
        }
        IndexCheck.Report report = IndexCheck.run(copy);
        IndexCheck.FileResult bad = report.firstDamaged();
        assertNotNull(bad, why + ": flip at " + rel + ":" + pos + " not found by check");
        assertEquals(rel, bad.file(), why + ": flip at " + rel + ":" + pos + " blamed on " + bad);
        assertTrue(bad.problem().contains(file.getFileName().toString()), bad.problem());
        DamageTest.deleteTree(copy);
      }
    }
    assertTrue(passedOpen > 0, "some flips pass the fast open (else open would still read every byte)");
  }

  @Test
  void mappedReaderReadsFieldsPastTwoGiB() throws IOException {
    Path file = tmp.resolve("big.bin");
    UUID uuid = UUID.randomUUID();
    FileRef ref;
    try (ChecksummedFile.Out out = ChecksummedFile.create(file, "actindex.test", 1, 7, uuid)) {
      ref = out.finish();
    }
    byte[] small = Files.readAllBytes(file);
    long header = small.length - ChecksummedFile.FOOTER_LENGTH;
    long far = (3L << 30) + 12345; // past 2^31 and 2^32 is not needed: past Integer.MAX_VALUE is the point
    try (RandomAccessFile raf = new RandomAccessFile(file.toFile(), "rw")) {
      raf.setLength(far + 8 + ChecksummedFile.FOOTER_LENGTH); // sparse: no real disk use
      raf.seek(far);
      raf.writeLong(0x0123456789abcdefL);
      raf.writeInt(ChecksummedFile.FOOTER_MAGIC);
      raf.writeLong(ref.crc() & 0xffffffffL);
    }
    try (Arena arena = Arena.ofConfined()) {
      ChecksummedFile.In in = ChecksummedFile.check(file, ChecksummedFile.map(file, arena), "actindex.test", 1, 1, 7,
          uuid, null, ChecksummedFile.Check.OPEN);
      in.skip("gap", far - header);
      assertEquals(0x0123456789abcdefL, in.getLong("far field"));
      in.end();
      assertFalse(in.remaining() > 0);
    }
  }

  /**
   * Arrays of at least {@link ChecksummedFile#BULK_BYTES} and large stream reads go through the open
   * channel (positional reads), smaller ones through the mapping: both give the values written by
   * {@link java.io.DataOutputStream} (big-endian, its documented format), at offsets that are not a
   * multiple of 8, and a channel onto a file shorter than the mapping is refused naming the field.
   */
  @Test
  void largeArraysReadThroughTheChannelEqualWhatWasWritten() throws IOException {
    long seed = Randoms.seed(11);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path file = tmp.resolve("bulk.bin");
    UUID uuid = UUID.randomUUID();
    long[] longs = new long[300_000 + rnd.nextInt(1000)]; // 2.4 MB: read through the channel
    int[] ints = new int[300_000 + rnd.nextInt(1000)];
    int[] few = new int[100]; // under the threshold: from the mapping
    byte[] tail = new byte[(3 << 20) + rnd.nextInt(1000)];
    for (int i = 0; i < longs.length; i++) longs[i] = rnd.nextLong();
    for (int i = 0; i < ints.length; i++) ints[i] = rnd.nextInt();
    for (int i = 0; i < few.length; i++) few[i] = rnd.nextInt();
    rnd.nextBytes(tail);
    try (ChecksummedFile.Out out = ChecksummedFile.create(file, "actindex.test", 1, 7, uuid)) {
      out.writeByte(5); // every array below starts at an odd offset
      for (long v : longs) out.writeLong(v);
      for (int v : ints) out.writeInt(v);
      for (int v : few) out.writeInt(v);
      out.write(tail);
      out.finish();
    }
    for (boolean channel : new boolean[] {false, true})
      try (Arena arena = Arena.ofConfined(); java.nio.channels.FileChannel ch = ChecksummedFile.open(file)) {
        ChecksummedFile.In in = ChecksummedFile.check(file, ChecksummedFile.map(file, arena), "actindex.test", 1, 1, 7, uuid, null,
            ChecksummedFile.Check.OPEN).through(channel ? ch : null);
        String what = Randoms.describe(seed) + (channel ? " through the channel" : " from the mapping");
        assertEquals(5, in.getByte("odd"), what);
        org.junit.jupiter.api.Assertions.assertArrayEquals(longs, in.longs("longs", longs.length), what);
        org.junit.jupiter.api.Assertions.assertArrayEquals(ints, in.ints("ints", ints.length), what);
        org.junit.jupiter.api.Assertions.assertArrayEquals(few, in.ints("few", few.length), what);
        java.io.DataInputStream rest = in.rest();
        byte[] got = new byte[tail.length];
        rest.readFully(got, 0, 7); // small reads, then one large one
        rest.readFully(got, 7, tail.length - 7);
        org.junit.jupiter.api.Assertions.assertArrayEquals(tail, got, what);
        assertEquals(-1, rest.read(), what);
      }
    Path shorter = tmp.resolve("shorter.bin");
    byte[] all = Files.readAllBytes(file);
    Files.write(shorter, java.util.Arrays.copyOf(all, all.length / 2));
    try (Arena arena = Arena.ofConfined(); java.nio.channels.FileChannel ch = ChecksummedFile.open(shorter)) {
      ChecksummedFile.In in = ChecksummedFile.check(file, ChecksummedFile.map(file, arena), "actindex.test", 1, 1, 7, uuid, null,
          ChecksummedFile.Check.OPEN).through(ch);
      in.getByte("odd");
      in.longs("longs", longs.length);
      io.actindex.core.BadInputException e = org.junit.jupiter.api.Assertions.assertThrows(io.actindex.core.BadInputException.class,
          () -> in.ints("ints", ints.length));
      assertTrue(e.getMessage().contains(file.toString()) && e.getMessage().contains("ends inside field 'ints'"), e.getMessage());
    }
  }
}
