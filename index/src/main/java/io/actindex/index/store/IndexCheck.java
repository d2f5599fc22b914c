package io.actindex.index.store;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.MetaStore;
import io.actindex.index.meta.MetaWriter;
import io.actindex.index.mih.SelfJoin;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.function.Predicate;
import java.util.stream.Stream;

/**
 * Verifies every byte of an index folder's newest generation: the CRC32 of every file the manifest
 * names, every table key against its codes, Lucene's checksum of every file of the metadata commit,
 * then the cross-file counts that opening checks. Unlike {@link IndexReader#open}, it reads big
 * files in full, and it keeps going after a damaged file so the report lists every file. Files of
 * the folder and of {@code meta/} that the generation does not use (what a killed or failed change
 * left, a stray Lucene commit, the files of a change still running) are listed as leftovers, not
 * checked: they are not part of the index. Never writes (it tries the writer's lock for an instant
 * to tell whether a change is running).
 */
public final class IndexCheck {
  private IndexCheck() {}

  /** One file: its path relative to the folder, its size, and what is wrong (null when sound). */
  public record FileResult(String file, long bytes, String problem) {
    public boolean ok() {
      return problem == null;
    }

    /** "ok", "damaged", or "not checked" (a file whose check needs another file that is damaged). */
    public String status() {
      return problem == null ? "ok" : problem.startsWith(NOT_CHECKED) ? "not checked" : "damaged";
    }
  }

  private static final String NOT_CHECKED = "not checked: ";

  /**
   * A file the checked generation does not use: its path relative to the folder, its size, and
   * whether the next writer of the index removes it ({@link IndexWriter#open} deletes the names
   * actindex and Lucene write; a file of another name stays until someone deletes it).
   */
  public record Leftover(String file, long bytes, boolean removedByWriter) {}

  /**
   * Every file checked, in manifest order, then the metadata files and the cross-file check
   * ("index"); then the leftovers, by name (none when the manifest itself is damaged).
   * {@code writerRunning}: a writer held the folder's lock when the check began or ended, so some
   * leftovers may be the files of a change in progress (not yet named by a manifest).
   */
  public record Report(Path dir, long generation, List<FileResult> files, List<Leftover> leftovers, boolean writerRunning) {
    public Report {
      files = List.copyOf(files);
      leftovers = List.copyOf(leftovers);
    }

    public boolean ok() {
      return files.stream().allMatch(FileResult::ok);
    }

    /** The first damaged entry, or null. */
    public FileResult firstDamaged() {
      return files.stream().filter(f -> !f.ok()).findFirst().orElse(null);
    }
  }

  /** Checks {@code dir}; BadInputException only when it holds no index at all. */
  public static Report run(Path dir) {
    return run(dir, null);
  }

  /**
   * As {@link #run(Path)}, telling {@code progress} (null: nobody) the steps done of all steps: one
   * per file of the manifest (a segment's codes and tables count two), one for the metadata files,
   * one for the cross-file check.
   */
  public static Report run(Path dir, SelfJoin.Progress progress) {
    if (!Files.isDirectory(dir)) throw new BadInputException("index folder " + dir + " does not exist or is not a folder");
    long gen = Manifest.newestGeneration(dir);
    if (gen < 0) throw Manifest.noManifest(dir);
    boolean writing = WriteLock.heldByWriter(dir);
    List<FileResult> out = new ArrayList<>();
    String manifestName = Manifest.fileName(gen);
    Manifest m;
    try {
      m = Manifest.read(dir, gen);
      out.add(new FileResult(manifestName, size(dir.resolve(manifestName)), null));
    } catch (BadInputException e) {
      out.add(new FileResult(manifestName, size(dir.resolve(manifestName)), e.getMessage()));
      return new Report(dir, gen, out, List.of(), writing || WriteLock.heldByWriter(dir));
    }
    List<Path> files = new ArrayList<>();
    for (FileRef f : m.files()) files.add(dir.resolve(f.name()));
    long steps = 1 + files.size() + 2; // the manifest, its files, the metadata, the cross-file check
    long[] done = {0};
    Runnable step = () -> {
      if (progress != null) progress.update(++done[0], steps);
    };
    step.run();
    boolean filesOk = true;
    try (FileSource.Pinned src = FileSource.pin(files.stream().filter(Files::isRegularFile).toList())) {
      for (Manifest.SegmentEntry e : m.segments()) {
        String codes = e.codes().name(), tables = e.tables().name();
        String problem = problem(() -> Segment.read(dir, src, m, e, ChecksummedFile.Check.FULL));
        boolean codesBad = problem != null && problem.contains(dir.resolve(codes).toString());
        out.add(new FileResult(codes, size(dir.resolve(codes)), codesBad ? problem : null));
        out.add(new FileResult(tables, size(dir.resolve(tables)),
            codesBad ? NOT_CHECKED + "its codes file " + dir.resolve(codes) + " is damaged" : problem));
        filesOk &= problem == null;
        step.run();
        step.run();
        FileRef mags = m.magnitudes().get(e.segmentId());
        if (mags != null) {
          String mp = problem(() -> Magnitudes.read(dir, src, m, e, mags, ChecksummedFile.Check.FULL));
          out.add(new FileResult(mags.name(), size(dir.resolve(mags.name())), mp));
          filesOk &= mp == null;
          step.run();
        }
      }
      if (m.tombstones() != null) {
        String problem = problem(() -> Tombstones.read(dir, src, m, ChecksummedFile.Check.FULL));
        out.add(new FileResult(m.tombstones().name(), size(dir.resolve(m.tombstones().name())), problem));
        filesOk &= problem == null;
        step.run();
      }
      for (Map.Entry<String, FileRef> a : m.attachments().entrySet()) {
        String problem = problem(() -> Attachments.read(dir, src, m, a.getKey(), ChecksummedFile.Check.FULL));
        out.add(new FileResult(a.getValue().name(), size(dir.resolve(a.getValue().name())), problem));
        filesOk &= problem == null;
        step.run();
      }
    }
    Set<String> used = new HashSet<>(List.of(manifestName, WriteLock.FILE, IndexWriter.META_DIR));
    for (FileRef f : m.files()) used.add(f.name());
    List<Leftover> leftovers = leftovers(dir, "", used, IndexWriter::removesLeftover);
    Path metaDir = dir.resolve(IndexWriter.META_DIR);
    try {
      Map<String, String> metaFiles = MetaStore.checkFiles(metaDir, m.metaCommit());
      Set<String> metaUsed = new HashSet<>(metaFiles.keySet());
      metaUsed.add(MetaStore.LOCK_FILE);
      leftovers.addAll(leftovers(metaDir, IndexWriter.META_DIR + "/", metaUsed, name -> MetaWriter.removesLeftover(name, m.metaCommit())));
      for (Map.Entry<String, String> f : metaFiles.entrySet()) {
        String rel = IndexWriter.META_DIR + "/" + f.getKey();
        out.add(new FileResult(rel, size(dir.resolve(rel)),
            f.getValue() == null ? null : "metadata file " + dir.resolve(rel) + " is " + f.getValue()));
        filesOk &= f.getValue() == null;
      }
    } catch (BadInputException e) {
      out.add(new FileResult(IndexWriter.META_DIR, 0, e.getMessage()));
      filesOk = false;
    }
    step.run();
    if (filesOk) out.add(new FileResult("index", 0, problem(() -> IndexReader.open(dir).close())));
    step.run();
    leftovers.sort(java.util.Comparator.comparing(Leftover::file));
    return new Report(dir, gen, out, leftovers, writing || WriteLock.heldByWriter(dir));
  }

  /** The files (not folders) of {@code folder} not in {@code used}, named {@code prefix + name}. */
  private static List<Leftover> leftovers(Path folder, String prefix, Set<String> used, Predicate<String> removedByWriter) {
    List<Leftover> out = new ArrayList<>();
    try (Stream<Path> entries = Files.list(folder)) {
      for (Path p : (Iterable<Path>) entries::iterator) {
        String name = p.getFileName().toString();
        if (!used.contains(name) && !Files.isDirectory(p)) out.add(new Leftover(prefix + name, size(p), removedByWriter.test(name)));
      }
    } catch (java.io.IOException e) {
      throw new java.io.UncheckedIOException("cannot list " + folder, e);
    }
    return out;
  }

  private static String problem(Runnable check) {
    try {
      check.run();
      return null;
    } catch (BadInputException e) {
      return e.getMessage();
    }
  }

  private static long size(Path file) {
    try {
      return Files.size(file);
    } catch (java.io.IOException e) {
      return -1;
    }
  }
}
