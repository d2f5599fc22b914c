package io.actindex.index.store;

import io.actindex.index.meta.MetaOpeners;
import io.actindex.index.meta.MetaWriter;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.channels.FileChannel;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collection;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.stream.Stream;
import org.apache.lucene.store.Directory;
import org.apache.lucene.store.FilterDirectory;
import org.apache.lucene.store.IOContext;
import org.apache.lucene.store.IndexOutput;

/**
 * A test file layer that remembers what a real disk would still hold after a power loss: a file's
 * content only as of its last fsync, and a folder's names (new, renamed, deleted) only as of the
 * folder's last fsync. Every write, rename and delete also happens on the real folder (fsyncs are only recorded, not made); {@link
 * #crash()} then rewinds the real folder to the durable state. This is the usual model of POSIX
 * durability (a rename is durable once its folder is fsynced; see Pillai et al., "All File Systems
 * Are Not Created Equal", OSDI 2014, for the failures it catches). Lucene's files go through a
 * {@link FilterDirectory} that reports its syncs here.
 *
 * <p>The machine "dies" at the {@code crashAt}-th operation: that call and every later one throws
 * {@link PowerLost} without touching the disk.
 */
final class PowerLossIo extends StoreIo {
  /** Thrown once the simulated machine is off. */
  static final class PowerLost extends IOException {
    PowerLost() {
      super("simulated power loss");
    }
  }

  private final Path root;
  private final long crashAt;
  private long ops;
  private long nextIdentity;
  /** Current name -> file identity (an inode). */
  private final Map<Path, Long> current = new HashMap<>();
  /** Identity -> content as of its last fsync (absent: nothing of it is durable). */
  private final Map<Long, byte[]> durable = new HashMap<>();
  /** Folder -> its durable names (a name mapped to null is a sub-folder). */
  private final Map<Path, Map<String, Long>> durableNames = new HashMap<>();

  /** Takes {@code root} (and its sub-folders) as fully durable now. */
  PowerLossIo(Path root, long crashAt) throws IOException {
    this.root = root;
    this.crashAt = crashAt;
    try (Stream<Path> s = Files.walk(root)) {
      for (Path p : s.toList()) {
        if (Files.isDirectory(p)) {
          syncNames(p);
        } else {
          long id = nextIdentity++;
          current.put(p, id);
          durable.put(id, Files.readAllBytes(p));
        }
      }
    }
  }

  /** Operations made so far (the crash points a test can choose from). */
  long ops() {
    return ops;
  }

  boolean crashed() {
    return ops > crashAt;
  }

  private void tick() throws PowerLost {
    if (ops++ >= crashAt) throw new PowerLost();
  }

  @Override
  public FileChannel create(Path file) throws IOException {
    tick();
    FileChannel ch = StoreIo.REAL.create(file);
    current.computeIfAbsent(file, f -> nextIdentity++);
    return ch;
  }

  @Override
  public void force(FileChannel channel, Path file) throws IOException {
    tick();
    forced(file); // the real fsync is not needed: durability is what this layer records
  }

  private void forced(Path file) throws IOException {
    Long id = current.get(file);
    if (id == null) current.put(file, id = nextIdentity++);
    durable.put(id, Files.readAllBytes(file));
  }

  @Override
  public void move(Path from, Path to) throws IOException {
    tick();
    StoreIo.REAL.move(from, to);
    Long id = current.remove(from);
    current.put(to, id == null ? nextIdentity++ : id);
  }

  @Override
  public void syncDir(Path dir) throws IOException {
    tick();
    syncNames(dir);
  }

  private void syncNames(Path dir) throws IOException {
    Map<String, Long> names = new HashMap<>();
    try (Stream<Path> s = Files.list(dir)) {
      for (Path p : s.toList()) {
        if (Files.isDirectory(p)) {
          names.put(p.getFileName().toString(), null);
          durableNames.putIfAbsent(p, new HashMap<>());
        } else {
          Long id = current.get(p);
          if (id == null) { // written outside this layer (the lock file): durable as it is
            current.put(p, id = nextIdentity++);
            durable.put(id, Files.readAllBytes(p));
          }
          names.put(p.getFileName().toString(), id);
        }
      }
    }
    durableNames.put(dir, names);
  }

  @Override
  public void delete(Path file) throws IOException {
    tick();
    StoreIo.REAL.delete(file);
    current.remove(file);
  }

  @Override
  MetaWriter.Opener meta() {
    return MetaOpeners.wrapping(StoreIo.REAL.meta(), this::watched);
  }

  private Directory watched(Path dir, Directory real) {
    return new FilterDirectory(real) {
      @Override
      public IndexOutput createOutput(String name, IOContext context) throws IOException {
        tick();
        IndexOutput out = in.createOutput(name, context);
        current.put(dir.resolve(name), nextIdentity++);
        return out;
      }

      @Override
      public IndexOutput createTempOutput(String prefix, String suffix, IOContext context) throws IOException {
        tick();
        IndexOutput out = in.createTempOutput(prefix, suffix, context);
        current.put(dir.resolve(out.getName()), nextIdentity++);
        return out;
      }

      @Override
      public void sync(Collection<String> names) throws IOException {
        tick();
        for (String n : names) forced(dir.resolve(n));
      }

      @Override
      public void rename(String source, String dest) throws IOException {
        tick();
        in.rename(source, dest);
        Long id = current.remove(dir.resolve(source));
        current.put(dir.resolve(dest), id == null ? nextIdentity++ : id);
      }

      @Override
      public void syncMetaData() throws IOException {
        tick();
        syncNames(dir);
      }

      @Override
      public void deleteFile(String name) throws IOException {
        tick();
        in.deleteFile(name);
        current.remove(dir.resolve(name));
      }
    };
  }

  /** Rewinds the real folder to what survived the power loss. */
  void crash() {
    try {
      restore(root);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private void restore(Path dir) throws IOException {
    Map<String, Long> names = durableNames.getOrDefault(dir, Map.of());
    List<Path> present;
    try (Stream<Path> s = Files.list(dir)) {
      present = s.toList();
    }
    for (Path p : present) {
      String name = p.getFileName().toString();
      if (Files.isDirectory(p) && names.containsKey(name) && names.get(name) == null) continue;
      deleteTree(p);
    }
    for (Map.Entry<String, Long> e : names.entrySet()) {
      Path p = dir.resolve(e.getKey());
      if (e.getValue() == null) {
        Files.createDirectories(p);
        restore(p);
      } else {
        Files.write(p, durable.getOrDefault(e.getValue(), new byte[0]));
      }
    }
  }

  private static void deleteTree(Path p) throws IOException {
    try (Stream<Path> s = Files.walk(p)) {
      for (Path f : s.sorted(Comparator.reverseOrder()).toList()) Files.delete(f);
    }
  }

  /** Names the layer saw created but never made durable (for messages). */
  List<String> volatileNames() {
    List<String> out = new ArrayList<>();
    for (Path p : current.keySet()) {
      Map<String, Long> names = durableNames.get(p.getParent());
      if (names == null || !names.containsKey(p.getFileName().toString())) out.add(root.relativize(p).toString());
    }
    return out;
  }
}
