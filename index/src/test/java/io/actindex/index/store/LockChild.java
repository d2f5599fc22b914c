package io.actindex.index.store;

import io.actindex.core.BadInputException;
import java.io.IOException;
import java.nio.file.Path;

/**
 * Child process of {@link WriterLockTest}, a writer in another process: {@code DIR hold} opens a
 * writer, prints {@code HELD} and keeps it until its standard input ends; {@code DIR add} opens a
 * writer, adds {@link #ADDED} codes of {@link StoreFixtures#sample} with metadata rows, prints
 * {@code DONE} and closes it. A refusal prints {@code REFUSED} and its message, exit code 2.
 */
public final class LockChild {
  static final int ADDED = 20;

  public static void main(String[] args) throws IOException {
    Path dir = Path.of(args[0]);
    try (IndexWriter w = IndexWriter.open(dir)) {
      if (args[1].equals("hold")) {
        System.out.println("HELD");
        System.out.flush();
        while (System.in.read() >= 0) {
          // until the parent closes the pipe
        }
      } else {
        int first = w.maxId();
        w.add(StoreFixtures.sample(1).slice(0, ADDED), StoreFixtures.rows(first, ADDED));
        System.out.println("DONE");
      }
    } catch (BadInputException e) {
      System.out.println("REFUSED " + e.getMessage());
      System.exit(2);
    }
  }
}
