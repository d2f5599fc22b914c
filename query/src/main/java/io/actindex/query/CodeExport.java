package io.actindex.query;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeLayout;
import io.actindex.core.CsvCell;
import io.actindex.core.DiskFull;
import io.actindex.core.IdSet;
import io.actindex.core.OutputFiles;
import io.actindex.encode.io.NpyDtype;
import io.actindex.encode.io.NpyWriter;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import java.io.BufferedWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.io.Writer;
import java.nio.channels.Channels;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;

/**
 * {@code export-codes}: the codes of an index's live examples, in id order, as a {@code .npy} that
 * NumPy reads: uint8 0/1 of shape (n, bits), column i = bit i of the chosen layers; or, {@code
 * packed}, uint8 of shape (n, ceil(bits/8)) with eight bits a byte in NumPy's {@code packbits} order
 * (the first bit in the byte's most significant bit; the last byte's unused low bits 0), which is
 * what a build from packed codes reads back. Optionally also the exported examples' ids and keys
 * (CSV {@code id,key}) and their kept magnitudes, dequantised, as float32 (n, bits) in the same rows
 * and columns. Every target is checked before any work; each file is written to a temporary file
 * beside it and renamed into place once all are complete (an existing file is replaced).
 *
 * <pre>{@code
 * try (IndexReader r = IndexReader.open(Path.of("idx"))) {
 *   CodeExport.Result res = CodeExport.run(r,
 *       new CodeExport.Params(Path.of("codes.npy"), false, null, "split = test", Path.of("ids.csv"), null), Progress.NONE);
 * }
 * }</pre>
 */
public final class CodeExport {
  private CodeExport() {}

  /**
   * The codes file; whether to pack eight bits a byte; the layers whose bits to keep, in this order
   * (null or empty: every layer, in the index's order); a metadata filter (null: every live
   * example); the ids file (CSV, null: none); the magnitudes file ({@code .npy}, null: none).
   */
  public record Params(Path out, boolean packed, List<String> layers, String where, Path ids, Path magnitudes) {}

  /**
   * What was written: the rows (examples) and bits (columns before packing) of each file, the layers,
   * the files; {@code notes} for the user (a packed 1-bit export that a build cannot read back).
   */
  public record Result(int rows, int bits, boolean packed, List<String> layers, Path out, Path ids, Path magnitudes, List<String> notes) {}

  /** Rows written between progress reports and between writes to the files. */
  private static final int CHUNK = 4096;

  public static Result run(IndexReader reader, Params p, Progress progress) {
    Progress prog = progress == null ? Progress.NONE : progress;
    checkTargets(p);
    CodeLayout layout = reader.layout();
    int[] segments = Layers.select(layout, p.layers());
    List<String> names = new ArrayList<>();
    List<Integer> columnList = new ArrayList<>();
    for (int s : segments) {
      names.add(layout.segments().get(s).name());
      for (int b = 0; b < layout.segments().get(s).bits(); b++) columnList.add(layout.start(s) + b);
    }
    int[] cols = columnList.stream().mapToInt(Integer::intValue).toArray();
    int[] ids = select(reader, p.where());
    if (p.magnitudes() != null && !reader.hasMagnitudes())
      throw new BadInputException("`magnitudes`: " + Refine.noMagnitudes(reader, "to export"));
    try {
      write(reader, p, ids, cols, prog);
    } catch (IOException e) {
      throw new UncheckedIOException("cannot write " + p.out() + ": " + e.getMessage(), e);
    }
    List<String> notes = p.packed() && cols.length == 1
        ? List.of("note: a packed 1-bit code is one column, which a build from codes reads as 0/1 values (and refuses the packed byte 128):"
            + " to build from it, export without `packed`")
        : List.of();
    return new Result(ids.length, cols.length, p.packed(), List.copyOf(names), p.out(), p.ids(), p.magnitudes(), notes);
  }

  /** Refuses a target that cannot be written, or two outputs on one path, before any work. */
  private static void checkTargets(Params p) {
    OutputFiles.checkTarget(p.out(), "`out`");
    if (p.ids() != null) OutputFiles.checkTarget(p.ids(), "`ids`");
    if (p.magnitudes() != null) OutputFiles.checkTarget(p.magnitudes(), "`magnitudes`");
    OutputFiles.checkDistinct(p.ids(), "`ids`", p.out(), "`out`");
    OutputFiles.checkDistinct(p.magnitudes(), "`magnitudes`", p.out(), "`out`");
    OutputFiles.checkDistinct(p.magnitudes(), "`magnitudes`", p.ids(), "`ids`");
  }

  /** The live ids the filter selects, ascending; refused when there are none (an empty file would say nothing). */
  private static int[] select(IndexReader reader, String where) {
    IdSet set = where == null ? reader.liveIds() : Where.select(reader.meta(), where);
    int[] ids = set.toArray();
    if (ids.length > 0) return ids;
    if (reader.liveCount() == 0)
      throw new BadInputException(reader.dir() + ": the index holds no live examples (every example was deleted); nothing to export");
    throw new BadInputException("`where` " + BadInputException.quote(where) + " matches no live example of index " + reader.dir() + " (of the "
        + reader.liveCount() + " live); nothing to export");
  }

  private static void write(IndexReader reader, Params p, int[] ids, int[] cols, Progress prog) throws IOException {
    int bits = cols.length, width = p.packed() ? (bits + 7) >>> 3 : bits;
    try (NpyWriter codes = NpyWriter.create(p.out(), NpyDtype.UINT8, width);
        NpyWriter mags = p.magnitudes() == null ? null : NpyWriter.create(p.magnitudes(), NpyDtype.FLOAT32, bits);
        IdsFile keys = p.ids() == null ? null : new IdsFile(p.ids())) {
      byte[] rowBytes = new byte[CHUNK * width];
      float[] all = new float[reader.layout().bits()], rowFloats = mags == null ? null : new float[CHUNK * bits];
      for (int from = 0; from < ids.length; from += CHUNK) {
        int n = Math.min(CHUNK, ids.length - from);
        java.util.Arrays.fill(rowBytes, 0, n * width, (byte) 0);
        for (int r = 0; r < n; r++) {
          int id = ids[from + r];
          long[] code = reader.code(id);
          for (int c = 0; c < bits; c++) {
            int b = cols[c];
            if ((code[b >>> 6] >>> (b & 63) & 1L) == 0) continue;
            if (p.packed()) rowBytes[r * width + (c >>> 3)] |= (byte) (0x80 >>> (c & 7));
            else rowBytes[r * width + c] = 1;
          }
          if (mags != null) {
            if (!reader.magnitudes(id, all, 0)) throw new IllegalStateException("id " + id + " has no kept magnitudes");
            for (int c = 0; c < bits; c++) rowFloats[r * bits + c] = all[cols[c]];
          }
          if (keys != null) keys.row(id, reader.meta().document(id));
        }
        codes.writeBytes(rowBytes, n);
        if (mags != null) mags.write(rowFloats, n);
        prog.update(from + n, ids.length);
      }
      // every file is complete: only now does any take its name
      codes.commit();
      if (keys != null) keys.commit();
      if (mags != null) mags.commit();
    } catch (IOException e) {
      if (DiskFull.in(e)) throw DiskFull.refusal(p.out().toString(), "nothing was written (files already there are unchanged)", e);
      throw e;
    }
  }

  /** The ids file: CSV {@code id,key} with a header, written to a temporary file beside its target. */
  private static final class IdsFile implements AutoCloseable {
    private final OutputFiles.Temp temp;
    private final Writer w;
    private boolean committed;

    IdsFile(Path target) throws IOException {
      temp = OutputFiles.begin(target);
      w = new BufferedWriter(Channels.newWriter(temp.channel(), StandardCharsets.UTF_8));
      w.write("id,key\n");
    }

    void row(int id, Map<String, String> doc) throws IOException {
      w.write(Integer.toString(id));
      w.write(',');
      w.write(CsvCell.field(doc == null ? null : doc.get("key")));
      w.write('\n');
    }

    void commit() throws IOException {
      w.flush();
      temp.commit();
      committed = true;
    }

    @Override
    public void close() throws IOException {
      if (!committed) temp.close();
    }
  }
}
