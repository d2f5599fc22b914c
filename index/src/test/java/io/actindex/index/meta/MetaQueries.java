package io.actindex.index.meta;

import io.actindex.core.IdSet;
import org.apache.lucene.search.Query;

/**
 * For tests of other packages (the store's): runs any Lucene query through a store's package-private
 * {@link MetaStore#select}, which the library keeps out of its public signatures.
 */
public final class MetaQueries {
  private MetaQueries() {}

  /** {@code meta.select(query)}: the live ids matching {@code query}, a set over {@code [0, maxId)}. */
  public static IdSet select(MetaStore meta, Query query) {
    return meta.select(query);
  }
}
