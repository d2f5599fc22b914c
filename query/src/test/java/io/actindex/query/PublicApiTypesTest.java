package io.actindex.query;

import static org.assertj.core.api.Assertions.assertThat;

import io.actindex.index.meta.MetaStore;
import io.actindex.index.store.IndexReader;
import io.actindex.index.store.IndexWriter;
import io.actindex.index.store.StoreIo;
import java.io.IOException;
import java.lang.reflect.Executable;
import java.lang.reflect.Field;
import java.lang.reflect.GenericArrayType;
import java.lang.reflect.Member;
import java.lang.reflect.Modifier;
import java.lang.reflect.ParameterizedType;
import java.lang.reflect.Type;
import java.lang.reflect.TypeVariable;
import java.lang.reflect.WildcardType;
import java.nio.file.FileSystem;
import java.nio.file.FileSystems;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Deque;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Set;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;

/**
 * No public signature a library user can reach names a Lucene or RoaringBitmap type: starting from
 * {@link IndexReader}, {@link IndexWriter} and every public class of this module, every public or
 * protected constructor, method and field of every project class met on the way (parameters,
 * results, exceptions, type arguments, supertypes, nested classes) is walked, and each outside type
 * it names is checked; so is every public class of the index module, reached or not. Filters are
 * the project's {@code IdSet}; Lucene and RoaringBitmap stay inside.
 * (The query module does not depend on Lucene, so the walk's own test below uses RoaringBitmap.)
 */
class PublicApiTypesTest {
  private static final List<String> HIDDEN = List.of("org.apache.lucene.", "org.roaringbitmap.");

  @Test
  void noReachableSignatureNamesLuceneOrRoaring() throws Exception {
    List<Class<?>> roots = new ArrayList<>(List.of(IndexReader.class, IndexWriter.class));
    roots.addAll(publicClassesOf(Nearest.class));
    assertThat(roots).contains(IndexBuilder.class);
    Walk walk = new Walk();
    walk.from(roots);
    // the walk really goes through the store: the metadata store and the file seam are reached
    assertThat(walk.reached).contains(MetaStore.class, StoreIo.class, StoreIo.Forwarding.class);
    assertThat(walk.leaks).as("signatures naming Lucene or RoaringBitmap types").isEmpty();
  }

  /**
   * Every public class of the index module, reachable from the classes above or not (callable by
   * name all the same): none has a public or protected member naming a Lucene or RoaringBitmap type.
   */
  @Test
  void noPublicClassOfTheIndexModuleNamesLuceneOrRoaring() throws Exception {
    List<Class<?>> index = publicClassesOf(IndexReader.class);
    assertThat(index).as("public classes of the index module").contains(IndexReader.class, MetaStore.class, StoreIo.class);
    Walk walk = new Walk();
    walk.from(index);
    assertThat(walk.leaks).as("signatures naming Lucene or RoaringBitmap types").isEmpty();
  }

  /** The walk finds a hidden type however deep in a signature it sits (so the check above can fail). */
  @Test
  void theWalkFindsAHiddenTypeInsideASignature() {
    Walk walk = new Walk();
    walk.from(List.of(Leaky.class));
    assertThat(walk.leaks).containsExactlyInAnyOrder(
        Leaky.Inner.class.getName() + ".bits(): java.util.List<? extends org.roaringbitmap.RoaringBitmap>",
        Leaky.class.getName() + ".field: org.roaringbitmap.RoaringBitmap[][]");
  }

  /** A public class that leaks through a nested public class and a field (the walk's own test). */
  public static final class Leaky {
    public org.roaringbitmap.RoaringBitmap[][] field;

    public Inner inner() {
      return null;
    }

    public static final class Inner {
      public List<? extends org.roaringbitmap.RoaringBitmap> bits() {
        return null;
      }

      List<org.roaringbitmap.RoaringBitmap> hidden() { // package-private: not reachable, not reported
        return null;
      }
    }
  }

  private static final class Walk {
    final Set<Class<?>> reached = new LinkedHashSet<>();
    final List<String> leaks = new ArrayList<>();
    private final Deque<Class<?>> todo = new ArrayDeque<>();

    void from(List<Class<?>> roots) {
      for (Class<?> c : roots) visit(c);
      while (!todo.isEmpty()) {
        Class<?> c = todo.pop();
        String owner = c.getName();
        if (c.getGenericSuperclass() != null) types(owner + " extends", c.getGenericSuperclass());
        for (Type t : c.getGenericInterfaces()) types(owner + " implements", t);
        for (Class<?> nested : c.getDeclaredClasses()) if (visible(nested)) visit(nested);
        for (Field f : c.getDeclaredFields())
          if (visible(f)) types(owner + "." + f.getName(), f.getGenericType());
        List<Executable> calls = new ArrayList<>(List.of(c.getDeclaredConstructors()));
        calls.addAll(List.of(c.getDeclaredMethods()));
        for (Executable e : calls) {
          if (!visible(e) || e.isSynthetic()) continue;
          String where = owner + "." + (e instanceof java.lang.reflect.Constructor ? "<init>" : e.getName()) + "()";
          if (e instanceof java.lang.reflect.Method m) types(where, m.getGenericReturnType());
          for (Type t : e.getGenericParameterTypes()) types(where, t);
          for (Type t : e.getGenericExceptionTypes()) types(where, t);
        }
      }
    }

    private static boolean visible(Class<?> c) {
      return Modifier.isPublic(c.getModifiers()) || Modifier.isProtected(c.getModifiers());
    }

    private static boolean visible(Member m) {
      return Modifier.isPublic(m.getModifiers()) || Modifier.isProtected(m.getModifiers());
    }

    private void visit(Class<?> c) {
      while (c.isArray()) c = c.getComponentType();
      if (c.getName().startsWith("io.actindex.") && visible(c) && reached.add(c)) todo.push(c);
    }

    /** Records {@code t} (at {@code where}) if it names a hidden type anywhere; walks the project types it names. */
    private void types(String where, Type t) {
      if (names(t, false)) leaks.add(where + ": " + t.getTypeName());
      names(t, true);
    }

    /** Whether {@code t} names a hidden type; with {@code walk}, visits the project classes it names. */
    private boolean names(Type t, boolean walk) {
      if (t instanceof Class<?> c) {
        while (c.isArray()) c = c.getComponentType();
        if (walk) visit(c);
        String name = c.getName();
        return HIDDEN.stream().anyMatch(name::startsWith);
      }
      boolean any = false;
      if (t instanceof ParameterizedType p) {
        any = names(p.getRawType(), walk);
        for (Type a : p.getActualTypeArguments()) any |= names(a, walk);
      } else if (t instanceof WildcardType w) {
        for (Type b : w.getUpperBounds()) any |= names(b, walk);
        for (Type b : w.getLowerBounds()) any |= names(b, walk);
      } else if (t instanceof GenericArrayType a) {
        any = names(a.getGenericComponentType(), walk);
      } else if (t instanceof TypeVariable<?> v) {
        for (Type b : v.getBounds()) if (b != Object.class) any |= names(b, walk);
      }
      return any;
    }
  }

  /** The public top-level and nested classes compiled into the folder or jar that holds {@code anchor}. */
  private static List<Class<?>> publicClassesOf(Class<?> anchor) throws Exception {
    Path location = Path.of(anchor.getProtectionDomain().getCodeSource().getLocation().toURI());
    List<Class<?>> out = new ArrayList<>();
    try (FileSystem jar = Files.isDirectory(location) ? null : FileSystems.newFileSystem(location)) {
      list(jar == null ? location : jar.getPath("/"), anchor.getClassLoader(), out);
    }
    assertThat(out).as("public classes of " + location).contains(anchor);
    return out;
  }

  private static void list(Path root, ClassLoader loader, List<Class<?>> out) throws Exception {
    try (Stream<Path> files = Files.walk(root)) {
      for (Path p : (Iterable<Path>) files::iterator) {
        String rel = root.relativize(p).toString().replace(p.getFileSystem().getSeparator(), ".");
        if (!rel.endsWith(".class") || rel.equals("module-info.class") || rel.endsWith("package-info.class")) continue;
        Class<?> c = Class.forName(rel.substring(0, rel.length() - ".class".length()), false, loader);
        if (Modifier.isPublic(c.getModifiers()) && !c.isAnonymousClass() && !c.isLocalClass()) out.add(c);
      }
    } catch (IOException e) {
      throw new IOException("cannot list " + root, e);
    }
  }
}
