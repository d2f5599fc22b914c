/** JMH benchmarks: binary codes against full-precision search. */
package io.actindex.bench;
