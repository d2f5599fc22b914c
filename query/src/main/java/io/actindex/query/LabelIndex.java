package io.actindex.query;

import io.actindex.index.meta.MetaStore;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Map;

/**
 * The label of every live id, read with one filter per distinct label instead of one document
 * lookup per id: the ids that have a label are selected at once, then the label of the first id
 * not yet placed is read and every id carrying it is selected. Costs a few lookups per distinct
 * label. Package-private helper of {@link Census} and {@link Region}.
 */
final class LabelIndex {
  private final List<String> names;
  private final int[] labelOf; // by id: index into names, or -1

  private LabelIndex(List<String> names, int[] labelOf) {
    this.names = names;
    this.labelOf = labelOf;
  }

  static LabelIndex of(MetaStore meta, int maxId) {
    return of(meta, maxId, "label");
  }

  /** The same for another keyword field, e.g. {@code split}. */
  static LabelIndex of(MetaStore meta, int maxId, String field) {
    int[] labelOf = new int[maxId];
    Arrays.fill(labelOf, -1);
    List<String> names = new ArrayList<>();
    if (!meta.fields().containsKey(field)) return new LabelIndex(names, labelOf);
    for (int id : meta.selectHaving(field).toArray()) {
      if (id >= maxId || labelOf[id] >= 0) continue; // placed with an earlier id's label
      Map<String, String> doc = meta.document(id);
      String label = doc == null ? null : doc.get(field);
      if (label == null) continue; // not live or no label after all: skip it
      int index = names.size();
      names.add(label);
      labelOf[id] = index;
      for (int i : meta.selectEqual(field, label).toArray()) if (i < maxId) labelOf[i] = index;
    }
    return new LabelIndex(names, labelOf);
  }

  /** The number of the label of {@code id} (an index into the distinct labels), or -1. */
  int number(int id) {
    return id < labelOf.length ? labelOf[id] : -1;
  }

  /** The label of {@code id}, or null. */
  String label(int id) {
    int l = id < labelOf.length ? labelOf[id] : -1;
    return l < 0 ? null : names.get(l);
  }
}
