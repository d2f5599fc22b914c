package io.actindex.encode.io;

import java.io.IOException;
import java.io.OutputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;

/**
 * Writes a NumPy {@code .npz} archive (as {@code numpy.savez}: stored members {@code NAME.npy}).
 * Each member is an {@link NpyWriter} that can be filled row chunk by row chunk, all at once;
 * {@link #commit()} zips the members in the order they were added into a temporary file and moves
 * it into place atomically. {@link #close()} without a commit leaves nothing behind.
 */
public final class NpzWriter implements AutoCloseable {
  private final Path target;
  private final Path dir;
  private final Map<String, NpyWriter> members = new LinkedHashMap<>();
  private final Map<String, Path> files = new LinkedHashMap<>();
  private boolean committed;

  private NpzWriter(Path target) throws IOException {
    this.target = target;
    this.dir = Files.createTempDirectory(target.toAbsolutePath().getParent(), "." + target.getFileName() + ".");
  }

  public static NpzWriter create(Path file) throws IOException {
    return new NpzWriter(file);
  }

  /** Adds member {@code name} of rows shaped {@code trailingShape}; fill it, do not commit it. */
  public NpyWriter member(String name, NpyDtype dtype, long... trailingShape) throws IOException {
    if (members.containsKey(name)) throw new IllegalArgumentException("member '" + name + "' added twice");
    Path f = dir.resolve("m" + members.size() + ".npy");
    NpyWriter w = NpyWriter.create(f, dtype, trailingShape);
    members.put(name, w);
    files.put(name, f);
    return w;
  }

  public void commit() throws IOException {
    for (NpyWriter w : members.values()) w.commit();
    Path tmp = dir.resolve("archive.npz");
    try (OutputStream out = Files.newOutputStream(tmp); ZipOutputStream zip = new ZipOutputStream(out)) {
      zip.setMethod(ZipOutputStream.DEFLATED);
      zip.setLevel(0);
      for (var e : files.entrySet()) {
        zip.putNextEntry(new ZipEntry(e.getKey() + ".npy"));
        Files.copy(e.getValue(), zip);
        zip.closeEntry();
      }
    }
    try (var ch = java.nio.channels.FileChannel.open(tmp, java.nio.file.StandardOpenOption.WRITE)) {
      ch.force(true);
    }
    Files.move(tmp, target, StandardCopyOption.REPLACE_EXISTING, StandardCopyOption.ATOMIC_MOVE);
    committed = true;
    close();
  }

  @Override
  public void close() throws IOException {
    List<IOException> errors = new ArrayList<>();
    if (!committed) {
      for (NpyWriter w : members.values()) {
        try {
          w.close();
        } catch (IOException e) {
          errors.add(e);
        }
      }
    }
    for (Path f : files.values()) Files.deleteIfExists(f);
    Files.deleteIfExists(dir.resolve("archive.npz"));
    Files.deleteIfExists(dir);
    if (!errors.isEmpty()) throw errors.getFirst();
  }
}
