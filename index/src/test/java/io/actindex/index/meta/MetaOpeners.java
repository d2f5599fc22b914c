package io.actindex.index.meta;

import java.io.IOException;
import java.nio.file.Path;
import org.apache.lucene.store.Directory;

/**
 * For tests of other packages (the store's): a {@link MetaWriter.Opener} whose Lucene directory is
 * wrapped, to watch or break Lucene's file operations, without a public signature in the library
 * naming Lucene's directory.
 */
public final class MetaOpeners {
  private MetaOpeners() {}

  /** Wraps the directory {@code base} opens over a folder. */
  public interface Wrap {
    Directory wrap(Path metaDir, Directory opened) throws IOException;
  }

  /** An opener that opens through {@code base}, then hands the directory to {@code wrap}. */
  public static MetaWriter.Opener wrapping(MetaWriter.Opener base, Wrap wrap) {
    return new MetaWriter.Opener() {
      @Override
      Directory open(Path metaDir) throws IOException {
        return wrap.wrap(metaDir, base.open(metaDir));
      }
    };
  }
}
