package io.actindex.cli;

import picocli.CommandLine;
import picocli.CommandLine.Command;

/** Entry point of the {@code actindex} command. */
@Command(
    name = "actindex",
    mixinStandardHelpOptions = true,
    version = "actindex 0.1.0",
    description = "Exact Hamming search over the activation codes of ReLU networks.")
public final class Main implements Runnable {

  @Override
  public void run() {
    new CommandLine(this).usage(System.out);
  }

  public static void main(String[] args) {
    System.exit(new CommandLine(new Main()).execute(args));
  }
}
