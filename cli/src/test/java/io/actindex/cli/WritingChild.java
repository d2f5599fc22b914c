package io.actindex.cli;

import io.actindex.core.CodeBlock;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.StoreIo;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;

/**
 * Child process of {@link CheckDuringWriteEndToEndTest}, a write in progress in another process:
 * {@code DIR} opens a writer and adds {@link #ADDED} codes (copies of ids 0..) with metadata rows
 * (keys {@code during-I}); just before the add renames its manifest into place, every other file of
 * the change written, it prints {@code WRITING} and waits until its standard input ends, then
 * finishes the add and prints {@code DONE}.
 */
public final class WritingChild {
  static final int ADDED = 5;

  public static void main(String[] args) throws IOException {
    Path dir = Path.of(args[0]);
    StoreIo io = new StoreIo.Forwarding(StoreIo.REAL) {
      private boolean paused;

      @Override
      public void move(Path from, Path to) throws IOException {
        if (!paused && to.getFileName().toString().startsWith("manifest-")) {
          paused = true;
          System.out.println("WRITING");
          System.out.flush();
          while (System.in.read() >= 0) {
            // until the parent closes the pipe
          }
        }
        super.move(from, to);
      }
    };
    try (IndexReader r = IndexReader.open(dir); IndexWriter w = IndexWriter.open(dir, io)) {
      int words = w.layout().words();
      long[] codes = new long[ADDED * words];
      List<Map<String, String>> rows = new ArrayList<>();
      for (int i = 0; i < ADDED; i++) {
        System.arraycopy(r.code(i), 0, codes, i * words, words);
        rows.add(Map.of("key", "during-" + i));
      }
      w.add(new CodeBlock(w.layout(), ADDED, codes), rows);
    }
    System.out.println("DONE");
  }
}
