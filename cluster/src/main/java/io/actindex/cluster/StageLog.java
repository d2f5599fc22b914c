package io.actindex.cluster;

import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.apache.spark.SparkContext;
import org.apache.spark.scheduler.SparkListener;
import org.apache.spark.scheduler.SparkListenerJobStart;
import org.apache.spark.scheduler.SparkListenerStageCompleted;
import org.apache.spark.scheduler.StageInfo;

/**
 * Time, tasks and shuffle bytes of every stage a run completes, labelled with the step that ran it
 * (the job description set before each action). Registered for one run, then removed.
 */
final class StageLog extends SparkListener {
  /** One completed stage. */
  record Stage(String step, int id, int tasks, double seconds, long shuffleWriteBytes, long shuffleReadBytes, long inputRecords) {}

  private final Map<Integer, String> stepOfStage = new HashMap<>();
  private final List<Stage> stages = new ArrayList<>();

  @Override
  public synchronized void onJobStart(SparkListenerJobStart job) {
    String step = job.properties() == null ? null : job.properties().getProperty("spark.job.description");
    for (Object id : scala.jdk.javaapi.CollectionConverters.asJava(job.stageIds())) stepOfStage.put((Integer) id, step);
  }

  @Override
  public synchronized void onStageCompleted(SparkListenerStageCompleted done) {
    StageInfo s = done.stageInfo();
    long start = s.submissionTime().isDefined() ? (Long) s.submissionTime().get() : 0;
    long end = s.completionTime().isDefined() ? (Long) s.completionTime().get() : start;
    var m = s.taskMetrics();
    stages.add(new Stage(stepOfStage.getOrDefault(s.stageId(), s.name()), s.stageId(), s.numTasks(), (end - start) / 1000.0,
        m.shuffleWriteMetrics().bytesWritten(), m.shuffleReadMetrics().totalBytesRead(), m.inputMetrics().recordsRead()));
  }

  /** The stages completed so far, in completion order, after the listener bus has delivered its events. */
  List<Stage> stages(SparkContext sc) {
    try {
      sc.listenerBus().waitUntilEmpty(10_000);
    } catch (java.util.concurrent.TimeoutException | RuntimeException e) {
      // an event still queued after 10 s: report what has arrived
    }
    synchronized (this) {
      return List.copyOf(stages);
    }
  }
}
