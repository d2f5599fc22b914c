package io.actindex.encode.mlp;

import io.actindex.core.BadInputException;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * Decides the forward order of an MLP's linear layers. A safetensors file is a map from names to
 * tensors: it does not record the order in which a network applies its layers, so the order
 * comes from, in turn:
 *
 * <ol>
 *   <li>the order the user gives ({@link From#OPTION}), checked against the shapes;
 *   <li>the numbers in the names, when the names differ only in their numbers ({@code 0, 2, 4};
 *       {@code net.0, net.2}; {@code fc1, fc2}; {@code layer9, layer10}), in natural order
 *       ({@link From#NAMES}), checked against the shapes;
 *   <li>else the shapes alone ({@link From#SHAPES}): every order in which each weight {@code [out,
 *       in]} takes the previous layer's {@code out} as its {@code in} (and the first takes the
 *       input width, when known). Exactly one such order is used; several (square layers) are
 *       refused with the candidates named, so that the user picks one.
 * </ol>
 *
 * Names like {@code input, hidden, output}, {@code encoder, decoder, head} or {@code fc1, fc2,
 * out} give no order: sorting them would be a guess. Every refusal is a {@link BadInputException}.
 */
public final class LayerOrder {
  private LayerOrder() {}

  /** Where an order came from. */
  public enum From { OPTION, NAMES, SHAPES }

  /** One linear layer as the file declares it: weight shape {@code [out, in]}. */
  public record Shape(String name, long out, long in) {}

  /** The order, and where it came from. */
  public record Resolved(List<String> order, From from) {}

  /** Candidate orders shown in a refusal, and the search's step budget. */
  static final int MAX_CANDIDATES = 4, SEARCH_STEPS = 1_000_000;

  private static final Pattern DIGITS = Pattern.compile("\\d+");

  /**
   * The forward order of {@code layers}. {@code given} is the user's order (null = decide);
   * {@code inputWidth} the width of the inputs (-1 if unknown), used only to choose among orders
   * the shapes allow. {@code file} names the model in messages.
   */
  public static Resolved resolve(String file, List<Shape> layers, List<String> given, long inputWidth) {
    Map<String, Shape> byName = new LinkedHashMap<>();
    for (Shape s : layers) byName.put(s.name(), s);
    if (given != null) {
      Set<String> seen = new HashSet<>();
      for (String n : given) {
        if (!seen.add(n)) throw new BadInputException(file + ": layer order names layer " + BadInputException.quote(n) + " twice");
        if (!byName.containsKey(n))
          throw new BadInputException(file + ": layer order names " + BadInputException.quote(n) + ", which is not a layer (layers: " + names(byName.keySet()) + ")");
      }
      if (given.size() != byName.size()) {
        List<String> missing = byName.keySet().stream().filter(n -> !seen.contains(n)).toList();
        throw new BadInputException(file + ": layer order leaves out " + names(missing) + "; it must list every layer (" + names(byName.keySet()) + ")");
      }
      List<Shape> ordered = given.stream().map(byName::get).toList();
      String broken = brokenLink(ordered);
      if (broken != null) throw new BadInputException(file + ": the given layer order " + names(given) + " does not chain: " + broken);
      return new Resolved(List.copyOf(given), From.OPTION);
    }
    if (namesGiveOrder(byName.keySet())) {
      List<Shape> ordered = new ArrayList<>(layers);
      ordered.sort(Comparator.comparing((Shape s) -> numbers(s.name()), LayerOrder::compareNumbers));
      String broken = brokenLink(ordered);
      if (broken == null) return new Resolved(ordered.stream().map(Shape::name).toList(), From.NAMES);
      String head = file + ": the numbers in the layer names give the order " + names(ordered.stream().map(Shape::name).toList())
          + ", but it does not chain: " + broken + "; ";
      if (chainsTransposed(ordered, inputWidth))
        throw new BadInputException(head + "read as [in, out] (how scikit-learn's coefs_, Keras and JAX/Flax store a dense kernel) the weights chain in this order from the"
            + " input width " + inputWidth + ": save each one transposed, as [out, in] like PyTorch's nn.Linear: np.ascontiguousarray(W.T)");
      List<List<String>> chains = chains(file, layers, inputWidth);
      throw new BadInputException(head + (chains.isEmpty() ? "no order of the layers chains" : candidates(chains)));
    }
    List<List<String>> chains = chains(file, layers, inputWidth);
    if (inputWidth >= 0 && chains.stream().noneMatch(c -> byName.get(c.getFirst()).in() == inputWidth)) {
      // no order starts with the input width: read as [in, out], do the weights chain from it?
      List<Shape> flipped = layers.stream().map(l -> new Shape(l.name(), l.in(), l.out())).toList();
      List<List<String>> from = chains(file, flipped, inputWidth).stream().filter(c -> byName.get(c.getFirst()).out() == inputWidth).toList();
      if (!from.isEmpty())
        throw new BadInputException(file + ": no order of the weights " + shapes(layers) + " read as [out, in] starts with the input width " + inputWidth
            + "; read as [in, out] (how scikit-learn's coefs_, Keras and JAX/Flax store a dense kernel) they chain as "
            + String.join(",", from.getFirst().stream().map(BadInputException::plain).toList()) + " from it: save each one transposed, as [out, in]"
            + " like PyTorch's nn.Linear: np.ascontiguousarray(W.T)");
    }
    if (chains.size() == 1) return new Resolved(chains.getFirst(), From.SHAPES);
    if (chains.isEmpty())
      throw new BadInputException(file + ": no order of the layers " + shapes(layers) + " chains (each weight [out, in] must take the previous layer's out as its in"
          + (inputWidth >= 0 ? ", the first the input width " + inputWidth : "") + ")");
    throw new BadInputException(file + ": the layer names give no order and the weight shapes " + shapes(layers) + " allow several: " + candidates(chains));
  }

  private static String candidates(List<List<String>> chains) {
    StringBuilder sb = new StringBuilder(chains.size() == 1 ? "the shapes allow " : "candidate orders ");
    for (int i = 0; i < Math.min(chains.size(), MAX_CANDIDATES - 1); i++) sb.append(i == 0 ? "" : " or ").append(String.join(",", chains.get(i).stream().map(BadInputException::plain).toList()));
    if (chains.size() >= MAX_CANDIDATES) sb.append(" or more");
    return sb.append(chains.size() == 1 ? "; pass it with `layerOrder` " + String.join(",", chains.getFirst().stream().map(BadInputException::plain).toList())
        : "; pass the right one with `layerOrder` NAME,NAME,...").toString();
  }

  /**
   * Names give an order when every name holds a number and the names are equal once their
   * numbers are blanked out ({@code fc1, fc2} yes; {@code fc1, fc2, out} no).
   */
  static boolean namesGiveOrder(Set<String> names) {
    String skeleton = null;
    Set<List<Long>> numbers = new HashSet<>();
    for (String n : names) {
      String s = DIGITS.matcher(n).replaceAll("#");
      if (s.equals(n) || !numbers.add(numbers(n))) return false; // no number, or the same numbers twice (fc1, fc01)
      if (skeleton != null && !skeleton.equals(s)) return false;
      skeleton = s;
    }
    return skeleton != null;
  }

  /** Whether {@code ordered}, each weight read as {@code [in, out]}, chains from a known {@code inputWidth}. */
  private static boolean chainsTransposed(List<Shape> ordered, long inputWidth) {
    if (inputWidth < 0 || ordered.getFirst().out() != inputWidth) return false;
    for (int i = 1; i < ordered.size(); i++) if (ordered.get(i - 1).in() != ordered.get(i).out()) return false;
    return true;
  }

  /** The first place where {@code ordered} does not chain, or null. */
  private static String brokenLink(List<Shape> ordered) {
    for (int i = 1; i < ordered.size(); i++) {
      Shape a = ordered.get(i - 1), b = ordered.get(i);
      if (a.out() != b.in())
        return "layer " + BadInputException.plain(b.name()) + " (weight [" + b.out() + ", " + b.in() + "]) takes " + b.in() + " inputs but layer " + BadInputException.plain(a.name())
            + " (weight [" + a.out() + ", " + a.in() + "]) gives " + a.out();
    }
    return null;
  }

  /**
   * Up to {@link #MAX_CANDIDATES} orders of all layers that chain (in file order of discovery);
   * when {@code inputWidth >= 0} and some start with a layer of that input width, only those.
   */
  static List<List<String>> chains(String file, List<Shape> layers, long inputWidth) {
    int[] steps = {0};
    List<List<String>> out = new ArrayList<>();
    if (inputWidth >= 0) {
      search(file, layers, s -> s.in() == inputWidth, out, steps);
      if (!out.isEmpty()) return out;
    }
    search(file, layers, s -> true, out, steps);
    return out;
  }

  private static void search(String file, List<Shape> layers, java.util.function.Predicate<Shape> first, List<List<String>> out, int[] steps) {
    boolean[] used = new boolean[layers.size()];
    List<Shape> path = new ArrayList<>();
    for (int i = 0; i < layers.size() && out.size() < MAX_CANDIDATES; i++) {
      if (!first.test(layers.get(i))) continue;
      used[i] = true;
      path.add(layers.get(i));
      extend(layers, path, used, out, steps);
      path.removeLast();
      used[i] = false;
    }
    if (steps[0] > SEARCH_STEPS)
      throw new BadInputException(file + ": the " + layers.size() + " layers allow too many orders to search; pass the order with `layerOrder`");
  }

  /** Depth-first: every way to continue {@code path} through the unused layers. */
  private static void extend(List<Shape> layers, List<Shape> path, boolean[] used, List<List<String>> out, int[] steps) {
    if (++steps[0] > SEARCH_STEPS || out.size() >= MAX_CANDIDATES) return;
    if (path.size() == layers.size()) {
      out.add(path.stream().map(Shape::name).toList());
      return;
    }
    long need = path.getLast().out();
    for (int i = 0; i < layers.size(); i++) {
      if (used[i] || layers.get(i).in() != need) continue;
      used[i] = true;
      path.add(layers.get(i));
      extend(layers, path, used, out, steps);
      path.removeLast();
      used[i] = false;
    }
  }

  private static List<Long> numbers(String s) {
    List<Long> l = new ArrayList<>();
    Matcher m = DIGITS.matcher(s);
    while (m.find()) l.add(m.group().length() > 18 ? Long.MAX_VALUE : Long.parseLong(m.group()));
    return l;
  }

  private static int compareNumbers(List<Long> a, List<Long> b) {
    for (int i = 0; i < Math.min(a.size(), b.size()); i++) {
      int c = Long.compare(a.get(i), b.get(i));
      if (c != 0) return c;
    }
    return Integer.compare(a.size(), b.size());
  }

  /** Layers listed in a message at most; the rest are counted. */
  static final int MAX_LISTED = 12;

  private static String shapes(List<Shape> layers) {
    StringBuilder sb = new StringBuilder();
    for (Shape s : layers.subList(0, Math.min(layers.size(), MAX_LISTED)))
      sb.append(sb.isEmpty() ? "" : ", ").append(BadInputException.plain(s.name())).append(" [").append(s.out()).append(", ").append(s.in()).append(']');
    return sb.append(layers.size() > MAX_LISTED ? ", ... (" + layers.size() + " layers)" : "").toString();
  }

  private static String names(java.util.Collection<String> names) {
    List<String> l = names.stream().limit(MAX_LISTED).map(BadInputException::plain).toList();
    return String.join(",", l) + (names.size() > MAX_LISTED ? ",... (" + names.size() + " layers)" : "");
  }
}
