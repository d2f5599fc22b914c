package io.actindex.cli;

import java.util.concurrent.Callable;

/**
 * A subcommand contributed by a module above {@code cli} (the demo). Implementations carry a
 * picocli {@code @Command} annotation with their name, have a public no-argument constructor, and
 * are listed in {@code META-INF/services/io.actindex.cli.ExtraCommand}.
 */
public interface ExtraCommand extends Callable<Integer> {}
