package io.actindex.encode.io;

import io.actindex.core.OutputFiles;
import java.io.IOException;
import java.nio.channels.Channels;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;

/**
 * Writes a NumPy {@code .npz} archive (as {@code numpy.savez}: stored members {@code NAME.npy}).
 * Each member is an {@link NpyWriter} that can be filled row chunk by row chunk, all at once, in a
 * temporary file of the target's ({@link OutputFiles#begin}: {@code .NAME.RANDOM.tmp} beside it);
 * {@link #commit()} zips the members in the order they were added into one more such file and
 * renames it onto the target. {@link #close()} without a commit leaves nothing behind, and a
 * killed write leaves only files that a later write of the target removes.
 */
public final class NpzWriter implements AutoCloseable {
  private final Path target;
  private final Map<String, NpyWriter> members = new LinkedHashMap<>();

  private NpzWriter(Path target) {
    this.target = target;
  }

  public static NpzWriter create(Path file) throws IOException {
    return new NpzWriter(file);
  }

  /** Adds member {@code name} of rows shaped {@code trailingShape}; fill it, do not commit it. */
  public NpyWriter member(String name, NpyDtype dtype, long... trailingShape) throws IOException {
    if (members.containsKey(name)) throw new IllegalArgumentException("member '" + name + "' added twice");
    NpyWriter w = NpyWriter.create(target, dtype, trailingShape);
    members.put(name, w);
    return w;
  }

  public void commit() throws IOException {
    for (NpyWriter w : members.values()) w.finish();
    try (OutputFiles.Temp archive = OutputFiles.begin(target)) {
      ZipOutputStream zip = new ZipOutputStream(Channels.newOutputStream(archive.channel())); // not closed: that would close the channel
      zip.setMethod(ZipOutputStream.DEFLATED);
      zip.setLevel(0);
      for (var e : members.entrySet()) {
        zip.putNextEntry(new ZipEntry(e.getKey() + ".npy"));
        Files.copy(e.getValue().path(), zip);
        zip.closeEntry();
      }
      zip.finish();
      zip.flush();
      archive.commit();
    }
    close();
  }

  /** Deletes the members' temporary files. */
  @Override
  public void close() throws IOException {
    List<IOException> errors = new ArrayList<>();
    for (NpyWriter w : members.values()) {
      try {
        w.close();
      } catch (IOException e) {
        errors.add(e);
      }
    }
    if (!errors.isEmpty()) throw errors.getFirst();
  }
}
