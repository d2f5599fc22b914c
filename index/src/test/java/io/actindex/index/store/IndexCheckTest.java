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
 * Open and check: with every file counted as big (its CRC computed while its body is read, Lucene's
 * by reading the file), a flipped byte anywhere in any file of the index is refused by opening, and
 * {@link IndexCheck} finds it and names the file; a sound index checks clean. And the mapped reader reads fields past 2 GiB (a
 * sparse file).
 */
class IndexCheckTest {
  @TempDir Path tmp;

  @AfterEach
  void restore() {
    System.clearProperty(ChecksummedFile.SMALL_FILE_PROPERTY);
  }

  @Test
  void openAndCheckFindEveryFlippedByte() throws IOException {
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
    int trial = 0;
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
          org.junit.jupiter.api.Assertions.fail(why + ": flip at " + rel + ":" + pos + " passed the open");
        } catch (io.actindex.core.BadInputException expected) {
          assertTrue(expected.getMessage().contains(file.getFileName().toString()), expected.getMessage());
        }
        IndexCheck.Report report = IndexCheck.run(copy);
        IndexCheck.FileResult bad = report.firstDamaged();
        assertNotNull(bad, why + ": flip at " + rel + ":" + pos + " not found by check");
        assertEquals(rel, bad.file(), why + ": flip at " + rel + ":" + pos + " blamed on " + bad);
        assertTrue(bad.problem().contains(file.getFileName().toString()), bad.problem());
        DamageTest.deleteTree(copy);
      }
    }
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
      assertFalse(in.remaining() > 0); // end() would verify the CRC of all 3 GiB (the footer's is not theirs)
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
    Path file = tmp.resolve("bulk.bin");
    UUID uuid = UUID.randomUUID();
    Bulk bulk = Bulk.write(file, uuid, new SplittableRandom(seed));
    for (boolean channel : new boolean[] {false, true})
      try (Arena arena = Arena.ofConfined(); java.nio.channels.FileChannel ch = ChecksummedFile.open(file)) {
        ChecksummedFile.In in = ChecksummedFile.check(file, ChecksummedFile.map(file, arena), "actindex.test", 1, 1, 7, uuid, null,
            ChecksummedFile.Check.OPEN).through(channel ? ch : null);
        bulk.readAndCompare(in, Randoms.describe(seed) + (channel ? " through the channel" : " from the mapping"));
        in.end();
      }
    long[] longs = bulk.longs;
    int[] ints = bulk.ints;
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

  /**
   * A file over the size whose CRC open verifies up front: a flipped bit anywhere in its body (in an
   * array read from the mapping, one read through the channel, a small or a large stream read) is
   * refused as a checksum mismatch by the time {@link ChecksummedFile.In#end()} returns, both
   * through the channel and from the mapping alone, and nothing misread is returned silently.
   */
  @Test
  void aFlippedBitInABigFileIsRefusedWhileItIsRead() throws IOException {
    long seed = Randoms.seed(12);
    SplittableRandom rnd = new SplittableRandom(seed);
    Path pristine = tmp.resolve("pristine.bin"), file = tmp.resolve("flipped.bin");
    UUID uuid = UUID.randomUUID();
    Bulk bulk = Bulk.write(pristine, uuid, rnd);
    long size = Files.size(pristine);
    long body = 4 + 4 + "actindex.test".length() + 4 + 4 + 16;
    long[] marks = {body, body + 1 + 8L * bulk.longs.length / 2, body + 1 + 8L * bulk.longs.length + 2L * bulk.ints.length,
        size - ChecksummedFile.FOOTER_LENGTH - bulk.tail.length - 4 * 50, size - ChecksummedFile.FOOTER_LENGTH - bulk.tail.length + 3,
        size - ChecksummedFile.FOOTER_LENGTH - 1};
    for (int t = 0; t < marks.length + 6; t++) {
      long pos = t < marks.length ? marks[t] : body + rnd.nextLong(size - ChecksummedFile.FOOTER_LENGTH - body);
      Files.copy(pristine, file, java.nio.file.StandardCopyOption.REPLACE_EXISTING);
      try (RandomAccessFile raf = new RandomAccessFile(file.toFile(), "rw")) {
        raf.seek(pos);
        int b = raf.read();
        raf.seek(pos);
        raf.write(b ^ (1 << rnd.nextInt(8)));
      }
      for (boolean channel : new boolean[] {false, true}) {
        String what = Randoms.describe(seed) + ": flip at " + pos + (channel ? " through the channel" : " from the mapping");
        try (Arena arena = Arena.ofConfined(); java.nio.channels.FileChannel ch = ChecksummedFile.open(file)) {
          ChecksummedFile.In in = ChecksummedFile.check(file, ChecksummedFile.map(file, arena), "actindex.test", 1, 1, 7, uuid,
              null, ChecksummedFile.Check.OPEN).through(channel ? ch : null);
          io.actindex.core.BadInputException e = org.junit.jupiter.api.Assertions.assertThrows(
              io.actindex.core.BadInputException.class, () -> {
                bulk.read(in);
                in.end();
              }, what);
          assertTrue(e.getMessage().contains(file.toString()) && e.getMessage().contains("checksum mismatch"), what + ": " + e.getMessage());
        }
      }
    }
  }

  /** A test file: a byte, big arrays of longs and ints, a small array, then a tail read as a stream. */
  private record Bulk(byte odd, long[] longs, int[] ints, int[] few, byte[] tail, boolean ended) {
    static Bulk write(Path file, UUID uuid, SplittableRandom rnd) throws IOException {
      Bulk b = new Bulk((byte) 5, new long[300_000 + rnd.nextInt(1000)], // 2.4 MB: read through the channel
          new int[300_000 + rnd.nextInt(1000)], new int[100], // under the threshold: from the mapping
          new byte[(3 << 20) + rnd.nextInt(1000)], true);
      for (int i = 0; i < b.longs.length; i++) b.longs[i] = rnd.nextLong();
      for (int i = 0; i < b.ints.length; i++) b.ints[i] = rnd.nextInt();
      for (int i = 0; i < b.few.length; i++) b.few[i] = rnd.nextInt();
      rnd.nextBytes(b.tail);
      try (ChecksummedFile.Out out = ChecksummedFile.create(file, "actindex.test", 1, 7, uuid)) {
        out.writeByte(b.odd); // every array below starts at an odd offset
        for (long v : b.longs) out.writeLong(v);
        for (int v : b.ints) out.writeInt(v);
        for (int v : b.few) out.writeInt(v);
        out.write(b.tail);
        out.finish();
      }
      return b;
    }

    /** Reads every field of the body (the tail in a small read, then a large one). */
    Bulk read(ChecksummedFile.In in) throws IOException {
      byte odd = in.getByte("odd");
      long[] l = in.longs("longs", longs.length);
      int[] i = in.ints("ints", ints.length), f = in.ints("few", few.length);
      java.io.DataInputStream rest = in.rest();
      byte[] got = new byte[tail.length];
      rest.readFully(got, 0, 7);
      rest.readFully(got, 7, tail.length - 7);
      return new Bulk(odd, l, i, f, got, rest.read() == -1);
    }

    void readAndCompare(ChecksummedFile.In in, String what) throws IOException {
      Bulk got = read(in);
      assertEquals(odd, got.odd, what);
      assertTrue(got.ended, what);
      org.junit.jupiter.api.Assertions.assertArrayEquals(longs, got.longs, what);
      org.junit.jupiter.api.Assertions.assertArrayEquals(ints, got.ints, what);
      org.junit.jupiter.api.Assertions.assertArrayEquals(few, got.few, what);
      org.junit.jupiter.api.Assertions.assertArrayEquals(tail, got.tail, what);
    }
  }
}
