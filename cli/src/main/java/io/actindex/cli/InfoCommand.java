package io.actindex.cli;

import io.actindex.cli.format.CsvWriter;
import io.actindex.cli.format.JsonWriter;
import io.actindex.cli.format.TextTable;
import io.actindex.core.CodeLayout;
import io.actindex.index.mih.PlannerCalibration;
import io.actindex.index.mih.SearcherStats;
import io.actindex.index.store.IndexInfo;
import io.actindex.index.store.IndexReader;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Spec;

/** {@code actindex info}: what an index holds. */
@Command(name = "info", mixinStandardHelpOptions = true,
    description = {"Shows an index's layout, segments, counts, bits dropped as constant, search plan, build settings, size on disk"
        + " and memory once open.",
        "A segment's memory is its codes and search tables, plus, at most, what its cluster partition builds on the first"
            + " filtered or masked query (4 bytes per code, and radii per set of masked layers): counted from the partition's"
            + " size, since info runs no query."})
final class InfoCommand implements Callable<Integer> {
  @Spec CommandSpec spec;
  @Mixin Verbose verbose;
  @Mixin IndexOption index;
  @Mixin FormatOption format;

  /** Bits per kept magnitude when every segment keeps them, else 0. */
  private int magnitudeBits;

  @Override
  public Integer call() {
    IndexInfo info;
    Map<String, String> props;
    try (IndexReader reader = IndexReader.open(index.dir)) {
      info = reader.info();
      props = new TreeMap<>(reader.properties());
      magnitudeBits = reader.hasMagnitudes() ? reader.magnitudeBits() : 0;
    }
    PrintWriter out = spec.commandLine().getOut();
    switch (format.format) {
      case json -> json(out, info, props);
      case csv -> csv(out, info);
      case table -> table(out, info, props);
    }
    out.flush();
    return ExitCodes.OK;
  }

  private void json(PrintWriter out, IndexInfo info, Map<String, String> props) {
    JsonWriter j = new JsonWriter(out).beginObject()
        .member("index", index.dir.toString())
        .member("layout", info.layout().toString())
        .member("bits", info.layout().bits())
        .name("layers").beginArray();
    for (CodeLayout.Segment s : info.layout().segments())
      j.beginObject().member("name", s.name()).member("bits", s.bits()).endObject();
    j.endArray()
        .member("generation", info.generation())
        .member("next_id", info.nextId())
        .member("max_id", info.nextId()) // the earlier name of next_id, kept: JSON fields stay stable
        .member("live", info.liveCount())
        .member("deleted", info.nextId() - info.liveCount())
        .member("bytes_on_disk", info.bytesOnDisk());
    if (magnitudeBits == 0) j.name("magnitudes").nullValue();
    else j.name("magnitudes").beginObject()
        .member("bits", magnitudeBits)
        .member("bytes_per_example", io.actindex.index.store.Magnitudes.rowBytes(info.layout().bits(), magnitudeBits))
        .endObject();
    j.name("segments").beginArray();
    for (IndexInfo.SegmentInfo s : info.segments()) {
      j.beginObject()
          .member("segment", s.segmentId())
          .member("first_id", s.firstId())
          .member("end_id", s.endId())
          .member("count", s.count())
          .member("deleted", s.deleted())
          .member("bytes", s.bytes())
          .member("dropped_constant_bits", s.droppedConstantBits());
      searcher(j.name("searcher"), s.searcher());
      j.endObject();
    }
    j.endArray().name("planner_costs").beginObject()
        .member("source", PlannerCalibration.calibrated() ? "calibrated" : "stored")
        .member("file", PlannerCalibration.file().toString())
        .endObject();
    j.name("properties").stringMap(props).endObject();
    out.println();
  }

  private static void searcher(JsonWriter j, SearcherStats st) {
    j.beginObject()
        .member("substrings", st.substrings())
        .member("constant_bits", st.constantBits())
        .member("indexed_bits", st.indexedBits())
        .name("cascade").value(st.cascade())
        .member("table_bytes", st.tableBytes())
        .member("code_bytes", st.codeBytes())
        .member("on_demand_bytes", st.onDemandBytes())
        .name("tables").beginArray();
    for (SearcherStats.Table t : st.tables())
      j.beginObject()
          .member("width", t.width())
          .name("dense").value(t.dense())
          .member("non_empty_buckets", t.nonEmptyBuckets())
          .member("max_bucket", t.maxBucket())
          .member("mean_collisions", t.meanCollisions())
          .member("key_entropy", t.keyEntropy())
          .member("bytes", t.bytes())
          .endObject();
    j.endArray().endObject();
  }

  /** "scan", or "4 tables of 16+16+16+15 bits" (+ "cascade"). */
  static String plan(SearcherStats st) {
    if (st.substrings() == 0) return "scan";
    List<String> widths = new ArrayList<>();
    for (SearcherStats.Table t : st.tables()) widths.add(Integer.toString(t.width()));
    return st.substrings() + (st.substrings() == 1 ? " table of " : " tables of ") + String.join("+", widths) + " bits"
        + (st.cascade() ? ", cascade" : "");
  }

  /** "12.0 MiB", or "12.0 MiB + up to 4.0 MiB on demand" when the searcher builds more on first use. */
  static String memory(SearcherStats st) {
    String held = Units.bytes(st.codeBytes() + st.tableBytes());
    return st.onDemandBytes() == 0 ? held : held + " + up to " + Units.bytes(st.onDemandBytes()) + " on demand";
  }

  private static List<String> header() {
    return List.of("segment", "first_id", "end_id", "count", "deleted", "bytes", "dropped_constant_bits", "search_plan",
        "code_bytes", "table_bytes", "on_demand_bytes");
  }

  private static List<String> row(IndexInfo.SegmentInfo s) {
    return List.of(Integer.toString(s.segmentId()), Integer.toString(s.firstId()), Integer.toString(s.endId()),
        Integer.toString(s.count()), Integer.toString(s.deleted()), Long.toString(s.bytes()),
        Integer.toString(s.droppedConstantBits()), plan(s.searcher()), Long.toString(s.searcher().codeBytes()),
        Long.toString(s.searcher().tableBytes()), Long.toString(s.searcher().onDemandBytes()));
  }

  private static void csv(PrintWriter out, IndexInfo info) {
    CsvWriter csv = new CsvWriter(out, header());
    for (IndexInfo.SegmentInfo s : info.segments()) csv.row(row(s));
  }

  private void table(PrintWriter out, IndexInfo info, Map<String, String> props) {
    out.println("index:     " + index.dir);
    List<String> layers = new ArrayList<>();
    for (CodeLayout.Segment s : info.layout().segments()) layers.add(s.name() + " (" + s.bits() + " bits)");
    out.println("layers:    " + String.join(", ", layers) + "; " + info.layout().bits() + " bits in all");
    out.println("examples:  " + info.liveCount() + " live, " + (info.nextId() - info.liveCount()) + " deleted ("
        + (info.nextId() == 0 ? "no id given out yet" : "ids 0.." + (info.nextId() - 1) + " given out") + ", next id "
        + info.nextId() + ")");
    out.println("on disk:   " + Units.bytes(info.bytesOnDisk()) + ", generation " + info.generation());
    out.println("magnitudes: " + (magnitudeBits == 0 ? "none kept (nearest --refine needs them; see build --magnitudes)"
        : magnitudeBits + " bits per unit, " + io.actindex.index.store.Magnitudes.rowBytes(info.layout().bits(), magnitudeBits)
            + " bytes per example, beside the codes (" + (info.layout().bits() + 7) / 8 + " bytes)"));
    out.println("planner:   " + (PlannerCalibration.calibrated() ? "costs calibrated on this machine (" + PlannerCalibration.file() + ")"
        : "costs measured when each segment was built (no calibration at " + PlannerCalibration.file() + "; see calibrate-planner)"));
    out.println();
    out.println("segments:");
    TextTable t = new TextTable(List.of("segment", "ids", "count", "deleted", "size", "memory", "constant bits dropped", "search plan"));
    for (IndexInfo.SegmentInfo s : info.segments())
      t.row(List.of(Integer.toString(s.segmentId()), s.firstId() + ".." + (s.endId() - 1), Integer.toString(s.count()),
          Integer.toString(s.deleted()), Units.bytes(s.bytes()), memory(s.searcher()), Integer.toString(s.droppedConstantBits()),
          plan(s.searcher())));
    t.print(out, "  ");
    if (info.segments().size() > 1)
      out.println("  a query searches each of the " + info.segments().size() + " segments (at 1M codes measured 1.1-1.4x the time of one segment); "
          + "'actindex compact' merges them into one");
    if (!props.isEmpty()) {
      out.println();
      out.println("build settings:");
      TextTable p = new TextTable(List.of("property", "value"));
      // a long value (the column names of a wide CSV) is cut here; the JSON output holds it whole
      props.forEach((k, v) -> p.row(List.of(k, io.actindex.core.BadInputException.snippet(v, 200))));
      p.print(out, "  ");
    }
  }
}
