package io.actindex.index.mih;

/** Receives the pairs of a join, one call per pair, always from one thread at a time. */
@FunctionalInterface
public interface PairSink {
  void pair(int a, int b, int distance);
}
