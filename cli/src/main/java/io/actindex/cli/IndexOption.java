package io.actindex.cli;

import io.actindex.core.BadInputException;
import io.actindex.index.meta.Where;
import io.actindex.index.store.IndexReader;
import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.ParameterException;
import picocli.CommandLine.Spec;

/**
 * Mixin: {@code --index DIR}, an existing index folder. A path that exists but is not a folder (a
 * regular file, {@code /dev/null}) is refused when the command line is parsed; a folder that holds
 * no index is refused by the index reader. An index that holds no live example (every one deleted)
 * is not bad input, nor is a filter that matches none of them: commands with an empty answer give it
 * and {@link #noteIfEmpty} says why.
 */
public final class IndexOption {
  @Spec(Spec.Target.MIXEE) CommandSpec mixee;

  Path dir;

  @Option(names = "--index", required = true, paramLabel = "DIR", description = "The index folder.")
  void dir(Path dir) {
    if (Files.exists(dir) && !Files.isDirectory(dir))
      throw new ParameterException(mixee.commandLine(), "--index " + dir + ": not a folder; an index is the folder 'actindex build --out' made");
    this.dir = dir;
  }

  /**
   * After a command's work succeeded on an index of {@code live} live examples: one line on stderr
   * when there are none, so that an empty answer is not mistaken for "nothing matched". Called once
   * any progress bar is closed.
   */
  void noteIfEmpty(int live) {
    noteIfEmpty(live, null, null, live);
  }

  /**
   * {@link #noteIfEmpty(int)} for a command that worked on the {@code matched} live examples its
   * filter {@code where} (given as {@code option}; null: no filter) selected: when the index has live
   * examples but the filter matched none of them, the line names the filter.
   */
  void noteIfEmpty(int live, String option, String where, int matched) {
    String why;
    if (live == 0) why = "the index " + dir + " holds no live examples (every example was deleted); the answer is empty";
    else if (where != null && matched == 0)
      why = option + " " + BadInputException.quote(where) + " matches no live example (of the " + live + " in the index)";
    else return;
    PrintWriter err = mixee.commandLine().getErr();
    err.println("note: " + why);
    err.flush();
  }

  /**
   * {@link #noteIfEmpty(int, String, String, int)} after a search of {@code reader} filtered by
   * {@code --where} {@code where} (null: none) that {@code found} something or not; the filter's
   * live examples are counted only when it found nothing.
   */
  void noteIfNoneFound(IndexReader reader, String where, boolean found) {
    if (found) return;
    int live = reader.liveCount();
    noteIfEmpty(live, "--where", where, where == null || live == 0 ? live : Where.select(reader.meta(), where).count());
  }
}
