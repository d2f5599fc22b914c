package io.actindex.edge;

import java.io.IOException;
import java.io.InputStream;
import java.nio.ByteBuffer;
import java.nio.CharBuffer;
import java.nio.charset.CharsetDecoder;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;

/**
 * The lines of a byte stream as the project reads rows files (the index's CSV reader and the edge
 * jar alike): split at LF, a CR before it dropped, each line decoded strictly as UTF-8, a UTF-8 byte
 * order mark before the first line skipped, counted from 1. Refused with {@link Bad}, naming the
 * byte offset and the line: a UTF-16 byte order mark, a NUL byte (UTF-16 or binary data), bytes that
 * are not UTF-8 (Latin-1 text), a CR anywhere else (lines that end in CR alone, classic Mac OS, would
 * be one line) and a line longer than {@link RowText#MAX_LINE_BYTES} (so a stream without line ends
 * does not fill memory). Reads what is there ({@code read}), never waits for a full buffer, so rows
 * piped one by one can be answered one by one. Each caller words the refusals for its own input.
 * Not thread-safe.
 */
public final class Utf8Lines {
  /** What is wrong with the stream. */
  public enum Fault { UTF16_BOM, NUL, CR_INSIDE, NOT_UTF8, TOO_LONG }

  /** A refused stream: the fault, its byte offset in the stream (-1 for a line too long) and its line, from 1. */
  public static final class Bad extends RuntimeException {
    private final Fault fault;
    private final long offset, line;

    Bad(Fault fault, long offset, long line) {
      super(fault + " at byte " + offset + ", line " + line);
      this.fault = fault;
      this.offset = offset;
      this.line = line;
    }

    public Fault fault() {
      return fault;
    }

    public long offset() {
      return offset;
    }

    public long line() {
      return line;
    }
  }

  private final InputStream in;
  private final byte[] buf = new byte[1 << 16];
  private int pos, len;
  private long bufStart; // offset of buf[0] in the stream
  private byte[] bytes = new byte[256];
  private final CharsetDecoder utf8 = StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT)
      .onUnmappableCharacter(CodingErrorAction.REPORT);
  private long line; // lines returned so far

  public Utf8Lines(InputStream in) {
    this.in = in;
  }

  /** The number of the last line returned, from 1 (0 before the first). */
  public long line() {
    return line;
  }

  /** The next line, blank ones included, or null at the end of the stream. */
  public String next() throws IOException {
    int n = 0;
    long start = bufStart + pos;
    boolean any = false;
    while (true) {
      if (pos == len) {
        bufStart += len;
        len = Math.max(0, in.read(buf));
        pos = 0;
        if (len == 0) break;
        if (bufStart == 0) start = skipByteOrderMark();
      }
      any = true;
      int nl = -1;
      for (int i = pos; i < len; i++) {
        if (buf[i] == '\n') {
          nl = i;
          break;
        }
        if (buf[i] == 0) throw new Bad(Fault.NUL, bufStart + i, line + 1);
      }
      int end = nl < 0 ? len : nl;
      if ((long) n + end - pos > RowText.MAX_LINE_BYTES) throw new Bad(Fault.TOO_LONG, -1, line + 1);
      if (n + end - pos > bytes.length) bytes = Arrays.copyOf(bytes, Math.max(n + end - pos, bytes.length * 2));
      System.arraycopy(buf, pos, bytes, n, end - pos);
      n += end - pos;
      pos = nl < 0 ? len : nl + 1;
      if (nl >= 0) break;
    }
    if (!any) return null;
    if (n > 0 && bytes[n - 1] == '\r') n--;
    for (int i = 0; i < n; i++) if (bytes[i] == '\r') throw new Bad(Fault.CR_INSIDE, start + i, line + 1);
    ByteBuffer bb = ByteBuffer.wrap(bytes, 0, n);
    CharBuffer chars = CharBuffer.allocate(n);
    utf8.reset();
    if (utf8.decode(bb, chars, true).isError()) throw new Bad(Fault.NOT_UTF8, start + bb.position(), line + 1);
    utf8.flush(chars);
    line++;
    String s = chars.flip().toString();
    return line == 1 && s.startsWith("\uFEFF") ? s.substring(1) : s; // a UTF-8 mark split from the rest by a short first read
  }

  /** At the stream's first bytes: refuses a UTF-16 byte order mark, skips a UTF-8 one; the offset the first line starts at. */
  private long skipByteOrderMark() {
    if (len >= 2 && ((buf[0] & 0xff) == 0xff && (buf[1] & 0xff) == 0xfe || (buf[0] & 0xff) == 0xfe && (buf[1] & 0xff) == 0xff))
      throw new Bad(Fault.UTF16_BOM, 0, 1);
    if (len >= 3 && (buf[0] & 0xff) == 0xef && (buf[1] & 0xff) == 0xbb && (buf[2] & 0xff) == 0xbf) pos = 3;
    return pos;
  }
}
