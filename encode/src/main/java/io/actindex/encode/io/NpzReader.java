package io.actindex.encode.io;

import io.actindex.core.BadInputException;
import io.actindex.core.Names;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collections;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.zip.ZipEntry;
import java.util.zip.ZipException;
import java.util.zip.ZipFile;

/**
 * A NumPy {@code .npz} archive: a zip file whose members {@code NAME.npy} are arrays (written by
 * {@code numpy.savez}, stored, or {@code numpy.savez_compressed}, deflated). Each member streams
 * through an {@link NpyReader}; several members can be open at once. Thread-safe for opening
 * members; each reader is not. Array names are in Unicode NFC ({@link Names}): a member saved
 * under {@code cafe} + U+0301 is the array {@code café}, and two members that differ only so are refused.
 */
public final class NpzReader implements AutoCloseable {
  private final Path file;
  private final ZipFile zip;
  private final List<String> names;
  private final Map<String, String> members; // array name -> member name as written

  private NpzReader(Path file, ZipFile zip, List<String> names, Map<String, String> members) {
    this.file = file;
    this.zip = zip;
    this.names = names;
    this.members = members;
  }

  public static NpzReader open(Path file) throws IOException {
    ZipFile zip;
    try {
      zip = new ZipFile(file.toFile());
    } catch (ZipException e) {
      throw new BadInputException(file + ": not a NumPy .npz archive (not a readable zip file: " + e.getMessage() + ")");
    }
    List<String> names = new ArrayList<>();
    Map<String, String> members = new HashMap<>();
    var en = zip.entries();
    while (en.hasMoreElements()) {
      ZipEntry e = en.nextElement();
      if (e.isDirectory()) continue;
      if (!e.getName().endsWith(".npy")) {
        zip.close();
        throw new BadInputException(file + ": member " + BadInputException.quote(e.getName()) + " is not a .npy array");
      }
      String name = Names.nfc(e.getName().substring(0, e.getName().length() - 4));
      String before = members.putIfAbsent(name, e.getName());
      if (before != null) {
        zip.close();
        throw new BadInputException(file + ": the archive holds two members named " + BadInputException.quote(e.getName())
            + (before.equals(e.getName()) ? "" : " (written in two Unicode forms, one with a combining accent)") + "; which one is meant is unclear");
      }
      names.add(name);
    }
    SpillFiles.cleanStale();
    if (names.isEmpty()) {
      zip.close();
      throw new BadInputException(file + ": the .npz archive holds no arrays");
    }
    return new NpzReader(file, zip, Collections.unmodifiableList(names), members);
  }

  /** Array names (member names without {@code .npy}) in archive order. */
  public List<String> names() {
    return names;
  }

  /** Opens the array {@code name}; BadInputException if absent. */
  public NpyReader member(String name) throws IOException {
    String member = members.get(Names.nfc(name));
    ZipEntry e = member == null ? null : zip.getEntry(member);
    if (e == null) throw new BadInputException(file + ": no array named " + BadInputException.quote(name) + " (the archive holds " + names + ")");
    String label = file + "[" + BadInputException.plain(name) + "]";
    try {
      return NpyReader.open(label, new CrcCheckedStream(zip.getInputStream(e), e.getSize(), e.getCrc(), label), e.getSize());
    } catch (ZipException ex) {
      throw new BadInputException(label + ": damaged archive member: " + ex.getMessage());
    }
  }

  @Override
  public void close() throws IOException {
    zip.close();
  }

  /**
   * A member's bytes, checked against the CRC-32 its zip entry records once all {@code size} bytes
   * have been read (as NumPy's reader, through Python's zipfile, checks them): a damaged archive
   * is refused, never read as numbers. A reader closed before the end (rows that stop early) reads
   * the rest of the member at close just for the check, because the damage may lie in the rows
   * already used and only the whole member's CRC can tell: that costs one sequential read of the
   * remaining bytes (inflating them for a compressed member), and a mismatch fails the close.
   */
  private static final class CrcCheckedStream extends java.io.FilterInputStream {
    private final java.util.zip.CRC32 crc = new java.util.zip.CRC32();
    private final long size, expected;
    private final String label;
    private long read;

    CrcCheckedStream(java.io.InputStream in, long size, long expected, String label) {
      super(in);
      this.size = size;
      this.expected = expected;
      this.label = label;
    }

    @Override
    public int read() throws IOException {
      byte[] one = new byte[1];
      return read(one, 0, 1) < 0 ? -1 : one[0] & 0xff;
    }

    @Override
    public int read(byte[] b, int off, int len) throws IOException {
      int n;
      try {
        n = in.read(b, off, len);
      } catch (java.util.zip.ZipException | java.io.EOFException e) { // damaged deflate data, or cut short
        throw new BadInputException(label + ": damaged archive member (" + BadInputException.snippet(String.valueOf(e.getMessage()), 80) + ")", e);
      }
      if (n > 0) {
        crc.update(b, off, n);
        read += n;
        if (size >= 0 && expected >= 0 && read == size && crc.getValue() != expected)
          throw new BadInputException(label + ": damaged archive member: CRC-32 of its " + size + " bytes is "
              + Long.toHexString(crc.getValue()) + ", the archive records " + Long.toHexString(expected)
              + " (checked over the whole member, also when fewer rows are used)");
      } else if (n < 0 && size >= 0 && read < size) {
        throw new BadInputException(label + ": damaged archive member: it ends after " + read + " of its " + size + " bytes");
      }
      return n;
    }

    /** Reads what is left for the CRC check (see the class comment), then closes. */
    @Override
    public void close() throws IOException {
      try {
        if (size >= 0 && expected >= 0) {
          byte[] rest = new byte[64 * 1024];
          while (read < size && read(rest, 0, rest.length) >= 0) {
            // read() checks the CRC at the last byte
          }
        }
      } finally {
        super.close();
      }
    }

    @Override
    public long skip(long n) throws IOException {
      throw new IOException("skip is not supported on a checked member");
    }
  }
}
