package io.actindex.cluster;

/** The summary as one JSON object (RFC 8259; only numbers and plain ASCII names, so no escaping). */
final class SummaryJson {
  private SummaryJson() {}

  static String write(ClusterDupes.Summary s) {
    StringBuilder b = new StringBuilder("{");
    b.append("\"examples\":").append(s.examples());
    b.append(",\"bits\":").append(s.bits());
    b.append(",\"radius\":").append(s.radius());
    b.append(",\"pairs\":").append(s.pairs());
    b.append(",\"exact_duplicate_pairs\":").append(s.exactDuplicatePairs());
    b.append(",\"pairs_by_distance\":[");
    for (int d = 0; d < s.pairsByDistance().length; d++) b.append(d == 0 ? "" : ",").append(s.pairsByDistance()[d]);
    b.append("],\"groups\":").append(s.groups());
    b.append(",\"largest_group\":").append(s.largestGroup());
    b.append(",\"examples_in_groups\":").append(s.examplesInGroups());
    b.append(",\"cross_split_groups\":").append(s.crossSplitGroups() < 0 ? "null" : s.crossSplitGroups());
    b.append(",\"conflicting_groups\":").append(s.conflictingGroups() < 0 ? "null" : s.conflictingGroups());
    b.append(",\"tables\":").append(s.tables());
    b.append(",\"substring_radius\":").append(s.substringRadius());
    b.append(",\"block_size\":").append(s.blockSize());
    b.append(",\"split_buckets\":").append(s.splitBuckets());
    b.append(",\"largest_bucket\":").append(s.largestBucket());
    b.append(",\"component_rounds\":").append(s.componentRounds());
    b.append(",\"seconds\":").append(String.format(java.util.Locale.ROOT, "%.3f", s.seconds()));
    b.append(",\"stages\":[");
    for (int i = 0; i < s.stages().size(); i++) {
      StageLog.Stage st = s.stages().get(i);
      b.append(i == 0 ? "" : ",").append("{\"step\":\"").append(ascii(st.step())).append("\",\"stage\":").append(st.id())
          .append(",\"tasks\":").append(st.tasks()).append(",\"seconds\":").append(String.format(java.util.Locale.ROOT, "%.3f", st.seconds()))
          .append(",\"shuffle_write_bytes\":").append(st.shuffleWriteBytes()).append(",\"shuffle_read_bytes\":").append(st.shuffleReadBytes())
          .append(",\"input_records\":").append(st.inputRecords()).append('}');
    }
    return b.append("]}").toString();
  }

  /** Step names are ours, but stage names come from Spark: keep printable ASCII without quotes or backslashes. */
  private static String ascii(String s) {
    StringBuilder b = new StringBuilder();
    for (char c : String.valueOf(s).toCharArray()) b.append(c >= 0x20 && c < 0x7f && c != '"' && c != '\\' ? c : '_');
    return b.toString();
  }
}
