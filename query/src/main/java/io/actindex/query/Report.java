package io.actindex.query;

import io.actindex.core.OutputFiles;
import io.actindex.core.BadInputException;
import io.actindex.core.BadParameterException;
import io.actindex.core.CodeBlock;
import io.actindex.encode.io.CsvMatrixReader;
import io.actindex.index.store.IndexReader;
import io.actindex.query.report.HtmlPage;
import io.actindex.query.report.IndexReport;
import io.actindex.query.report.ReportSections;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;

/**
 * {@code report}: one self-contained HTML page about an index (layout and size, region occupancy,
 * neuron firing rates, distance to the nearest other example by split, label purity), written
 * through a temporary file and renamed, so a failed run never leaves half a page.
 */
public final class Report {
  private Report() {}

  /**
   * {@code out}: the HTML file to write; {@code title}: the page's heading (null: from the folder
   * name); {@code dupesRadius}: add a near-duplicate join at this radius (null: none); {@code
   * compareA}/{@code compareB}: add a comparison of two files (null: none); {@code compareKind}:
   * what they hold (null: told by the index as {@code compare --index} does, {@link
   * QuerySource#kindOf}); {@code compareHeader}: whether their CSV first line is a header (null:
   * detect); {@code threads} for the nearest-other distances, the join and the comparison.
   */
  public record Params(Path out, String title, Integer dupesRadius, Path compareA, Path compareB, Source.Kind compareKind,
      CsvMatrixReader.Header compareHeader, int threads) {
    public Params {
      if (out == null) throw new BadInputException("report: `out` is required");
      if ((compareA == null) != (compareB == null)) throw new BadInputException("report: give both `compareA` and `compareB`, or neither");
      Parallel.checkThreads(threads);
      if (compareHeader == null) compareHeader = CsvMatrixReader.Header.AUTO;
    }

    public Params(Path out, String title) {
      this(out, title, null, null, null, null, null, 1);
    }
  }

  /**
   * What was written: the file, its size, the numbers behind the page, the comparison's notes
   * ({@link Compare.Result#notes()}: how its files were read, what it approximated; empty without one),
   * and, when the index holds an OOD calibration, whether its live examples changed since ({@link
   * OodCalibration#liveCheck}, shown in the page's OOD section; null without a calibration).
   */
  public record Result(Path out, long bytes, IndexReport.Facts facts, List<String> notes, OodCalibration.LiveCheck liveCheck) {}

  /** The facts of an index that the page shows. */
  public static IndexReport.Facts facts(IndexReader reader, Progress progress) {
    return facts(reader, 1, progress);
  }

  /** As {@link #facts(IndexReader, Progress)}, the nearest-other distances measured on up to {@code threads} threads. */
  public static IndexReport.Facts facts(IndexReader reader, int threads, Progress progress) {
    int[] ids = new int[reader.liveCount()];
    CodeBlock codes = reader.liveCodes(ids);
    // labels and splits read per distinct value, not one metadata document per example
    LabelIndex labels = LabelIndex.of(reader.meta(), reader.maxId()), splits = LabelIndex.of(reader.meta(), reader.maxId(), "split");
    String[] label = new String[ids.length], split = new String[ids.length];
    for (int i = 0; i < ids.length; i++) {
      label[i] = labels.label(ids[i]);
      split[i] = splits.label(ids[i]);
    }
    Census.Result census = Census.compute(codes, label, i -> {
      Map<String, String> doc = reader.meta().document(ids[i]);
      return doc == null ? null : doc.get("key");
    }, new Census.Params(null, 5, 3));
    return new IndexReport.Facts(ids.length, census, IndexReport.nearestOther(codes, threads, progress), split);
  }

  /** Renders the page of {@code reader} with any extra sections already added to {@code page}'s tail by the caller. */
  public static Result run(IndexReader reader, Params p, Progress progress) throws IOException {
    OutputFiles.checkTarget(p.out(), "`out`", new OutputFiles.Input("`compareA`", p.compareA()),
        new OutputFiles.Input("`compareB`", p.compareB()));
    // the files' kinds settled before the long part, so a width that fits two kinds is refused at once
    Source a = compareSource(reader, p, p.compareA()), b = compareSource(reader, p, p.compareB());
    int bits = reader.layout().bits();
    if (p.dupesRadius() != null && (p.dupesRadius() < 0 || p.dupesRadius() > bits))
      throw new BadParameterException("dupesRadius", " must be 0 to the code length, " + bits + " bits; got " + p.dupesRadius());
    IndexReport.Facts f = facts(reader, p.threads(), progress);
    String title = p.title() != null ? p.title() : "actindex report: " + reader.dir().toAbsolutePath().normalize().getFileName();
    HtmlPage page = new HtmlPage(title, HtmlPage.count(f.examples(), "example") + ", " + HtmlPage.count(reader.layout().bits(), "bit") + " per example.");
    IndexReport.render(page, reader, f);
    OodCalibration.LiveCheck live = reader.attachment(OodCalibration.ATTACHMENT) == null ? null : OodCalibration.liveCheck(reader);
    if (live != null) ReportSections.ood(page, OodCalibrate.summary(OodCalibration.load(reader), OodCalibration.scoring(reader)), live);
    if (p.dupesRadius() != null)
      ReportSections.dupes(page, Dupes.run(reader, new Dupes.Params(p.dupesRadius(), null, null, false, false, 10, p.threads()), null, null),
          f.census().prefixes().stream().anyMatch(x -> x.purity() != null), java.util.Arrays.stream(f.splits()).anyMatch(java.util.Objects::nonNull));
    List<String> notes = List.of();
    if (a != null) {
      Compare.Options o = Compare.Options.defaults();
      o = new Compare.Options(o.permutations(), o.seed(), o.sigma(), o.alpha(), o.top(), o.matrixRows(), o.exactMax(), o.sinkhornRows(),
          o.reg(), o.maxIter(), o.tol(), p.threads());
      Compare.Result compared = Compare.run(new Compare.Params(reader.dir(), Compare.Sample.file(a), Compare.Sample.file(b), null, null,
          null, null, null, null, o, p.compareHeader()), null, false); // the page shows no floats: none read or taken
      ReportSections.compare(page, compared);
      notes = compared.notes();
    }
    byte[] html = page.finish().getBytes(StandardCharsets.UTF_8);
    write(p.out(), html);
    return new Result(p.out(), html.length, f, notes, live);
  }

  /** A comparison file as a source of its given kind, or of the kind the index tells ({@code --compare-kind} names the way out); null for none. */
  private static Source compareSource(IndexReader reader, Params p, Path file) {
    return file == null ? null : QuerySource.sourceOf(reader, p.compareKind(), file, p.compareHeader(), "`compareKind`");
  }

  /** Writes through a temporary file beside {@code out}, then renames it into place. */
  static void write(Path out, byte[] bytes) throws IOException {
    OutputFiles.write(out, bytes, "`out`");
  }
}
