package io.actindex.encode;

/**
 * How an activation becomes a bit: {@link #POSITIVE} {@code v > 0} (a ReLU unit is on), {@link
 * #THRESHOLD} {@code v > t} for a fixed {@code t}, {@link #MEDIAN} {@code v > median} of that neuron
 * over the build data (for activations that are not ReLU outputs).
 */
public enum BinarizeRule {
  POSITIVE,
  THRESHOLD,
  MEDIAN
}
