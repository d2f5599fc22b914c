package io.actindex.index.mih;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import io.actindex.core.BadInputException;
import io.actindex.core.CodeBlock;
import io.actindex.core.SyntheticCodes;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.FileTime;
import java.util.List;
import java.util.Optional;
import org.junit.jupiter.api.AfterEach;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The machine's planner calibration: measured, written, read back, refused with the file and line
 * when damaged, and taking the place of the costs an index stored when it is loaded.
 */
class PlannerCalibrationTest {
  @TempDir Path tmp;

  @AfterEach
  void forget() {
    System.clearProperty(PlannerCalibration.PROPERTY);
  }

  @Test
  void aCalibrationIsWrittenAndReadBack() throws Exception {
    PlannerCalibration.Result r = PlannerCalibration.calibrate(3);
    assertEquals(3, r.runs());
    assertEquals(PlannerCalibration.NAMES, r.costs().stream().map(PlannerCalibration.Cost::name).toList());
    for (PlannerCalibration.Cost c : r.costs()) {
      assertTrue(c.ns() > 0 && c.ns() < 1e6, c.toString());
      assertTrue(c.spread() >= 1, c.toString());
    }
    Path f = tmp.resolve("sub/dir/costs.properties"); // folders made as needed
    PlannerCalibration.write(r, f);
    double[] back = PlannerCalibration.read(f).orElseThrow().toArray(), measured = r.planner().toArray();
    for (int i = 0; i < back.length; i++) assertEquals(measured[i], back[i], 1e-5 * measured[i], PlannerCalibration.NAMES.get(i));
    try (var s = Files.list(f.getParent())) {
      assertEquals(List.of(f), s.toList(), "no temporary file left beside it");
    }
  }

  @Test
  void aMissingFileMeansNotCalibrated() {
    assertEquals(Optional.empty(), PlannerCalibration.read(tmp.resolve("none")));
    System.setProperty(PlannerCalibration.PROPERTY, tmp.resolve("none").toString());
    assertEquals(tmp.resolve("none"), PlannerCalibration.file());
    assertEquals(Optional.empty(), PlannerCalibration.current());
  }

  @Test
  void damagedFilesAreRefusedWithTheirNameAndLine() throws Exception {
    String good = String.join("\n", "format=1", "scan-per-code=0.4", "scan-per-word=0.3", "probe-dense=20", "probe-sparse=50", "candidate=30",
        "walk=3", "partition-code=2", "candidate-far=30");
    String[][] cases = {
      {good.replace("format=1\n", ""), "no 'format=1' line"},
      {good.replace("format=1", "format=2"), "line 1: 'format=2' is not a format"},
      {good + "\nwalk=4", "line 10: walk appears twice"},
      {good.replace("walk=3", "walk=fast"), "line 7: walk 'fast' is not a number"},
      {good.replace("walk=3", "walk=-3"), "line 7: walk -3.0 is outside (0, 1e6) ns"},
      {good.replace("walk=3", "walk=NaN"), "line 7: walk NaN is outside"},
      {good.replace("walk=3", "stroll=3"), "line 7: 'stroll=3' is not name=value"},
      {good.replace("walk=3", "walk 3"), "line 7: 'walk 3' is not name=value"},
      {good.replace("\ncandidate-far=30", ""), "candidate-far is missing"},
    };
    for (String[] c : cases) {
      Path f = tmp.resolve("bad.properties");
      Files.writeString(f, c[0]);
      BadInputException e = assertThrows(BadInputException.class, () -> PlannerCalibration.read(f), c[1]);
      assertTrue(e.getMessage().startsWith("planner costs " + f + ": "), e.getMessage());
      assertTrue(e.getMessage().contains(c[1]), e.getMessage() + " (wanted: " + c[1] + ")");
    }
    Path f = tmp.resolve("good.properties");
    Files.writeString(f, "# a comment\n\n" + good.replace("walk=3", " walk = 3 "));
    assertEquals(3, PlannerCalibration.read(f).orElseThrow().walk());
  }

  @Test
  void loadedSearchersPlanWithTheMachinesCalibration() throws Exception {
    CodeBlock codes = SyntheticCodes.reluLike(6_000, 64, 64, 11).codes();
    MihSearcher built = (MihSearcher) Searchers.build(codes, SearchPlanOptions.defaults(), PlannerCosts.defaults());
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    Searchers.write(built, new DataOutputStream(bytes));
    Path f = tmp.resolve("machine.properties");
    System.setProperty(PlannerCalibration.PROPERTY, f.toString());
    assertEquals(PlannerCosts.defaults(), load(bytes.toByteArray(), codes).cost, "no calibration: the stored costs");
    PlannerCosts calibrated = new PlannerCosts(1, 0.5, 7, 70, 40, 9, 3, 90);
    PlannerCalibration.write(new PlannerCalibration.Result(
        java.util.stream.IntStream.range(0, 8).mapToObj(i -> new PlannerCalibration.Cost(PlannerCalibration.NAMES.get(i), calibrated.toArray()[i], 1)).toList(), 1), f);
    assertEquals(calibrated, load(bytes.toByteArray(), codes).cost, "calibrated: the machine's costs");
    assertEquals(calibrated, PlannerCosts.machine(), "and builds plan with them too");
    Files.writeString(f, "format=1\nwalk=1\n");
    Files.setLastModifiedTime(f, FileTime.fromMillis(Files.getLastModifiedTime(f).toMillis() + 5_000)); // seen as changed
    BadInputException e = assertThrows(BadInputException.class, () -> load(bytes.toByteArray(), codes));
    assertTrue(e.getMessage().contains(f.toString()), e.getMessage());
  }

  private static MihSearcher load(byte[] payload, CodeBlock codes) throws Exception {
    return (MihSearcher) Searchers.read(new DataInputStream(new ByteArrayInputStream(payload)), codes);
  }
}
