package io.actindex.demo;

import io.actindex.encode.io.Json;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStreamReader;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.WebSocket;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Base64;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.CompletionStage;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.LinkedBlockingQueue;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * Test helper: Debian's {@code chromium} in headless mode, driven over the Chrome DevTools
 * Protocol (a JSON-RPC protocol over a WebSocket, documented by the Chromium project) with the
 * JDK's own WebSocket client. It loads one page, records every network request the page makes,
 * every console error and uncaught exception, evaluates a script in the page, and takes a PNG
 * screenshot. No third-party driver, so nothing is downloaded at test time.
 */
final class HeadlessChromium implements AutoCloseable {
  /** What the page did while it loaded. */
  record Load(List<String> requests, List<String> errors) {}

  private final Process process;
  private final Path profile;
  private final WebSocket socket;
  private final AtomicInteger ids = new AtomicInteger();
  private final Map<Integer, CompletableFuture<Map<String, Object>>> pending = new ConcurrentHashMap<>();
  private final LinkedBlockingQueue<Map<String, Object>> events = new LinkedBlockingQueue<>();
  private final List<String> requests = new CopyOnWriteArrayList<>(), errors = new CopyOnWriteArrayList<>();
  private String session;

  /** The browser's executable, if this machine has one. */
  static Optional<Path> find() {
    for (String p : List.of("/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/bin/google-chrome"))
      if (Files.isExecutable(Path.of(p))) return Optional.of(Path.of(p));
    return Optional.empty();
  }

  HeadlessChromium(Path executable, int width, int height) throws IOException, InterruptedException {
    profile = Files.createTempDirectory("actindex-chromium-");
    process = new ProcessBuilder(executable.toString(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
        "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
        "--disable-extensions", "--hide-scrollbars", "--window-size=" + width + "," + height,
        "--user-data-dir=" + profile, "--remote-debugging-port=0", "about:blank")
        .redirectErrorStream(true).start();
    String endpoint = endpoint(process);
    socket = HttpClient.newHttpClient().newWebSocketBuilder().connectTimeout(Duration.ofSeconds(30))
        .buildAsync(URI.create(endpoint), new Listener()).join();
  }

  private static String endpoint(Process p) throws IOException {
    BufferedReader r = new BufferedReader(new InputStreamReader(p.getInputStream(), StandardCharsets.UTF_8));
    StringBuilder seen = new StringBuilder();
    long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(60);
    String line;
    while (System.nanoTime() < deadline && (line = r.readLine()) != null) {
      seen.append(line).append('\n');
      int at = line.indexOf("ws://");
      if (line.contains("DevTools listening on") && at >= 0) {
        Thread drain = new Thread(() -> {
          try {
            while (r.readLine() != null) { /* keep the pipe empty */ }
          } catch (IOException ignored) {
            // the browser exited
          }
        });
        drain.setDaemon(true);
        drain.start();
        return line.substring(at).trim();
      }
    }
    throw new IOException("chromium did not print its DevTools endpoint; it said:\n" + seen);
  }

  /** Opens {@code url} in a new tab and waits for its load event. */
  Load load(String url) throws Exception {
    Map<String, Object> target = call(null, "Target.createTarget", Map.of("url", "about:blank"));
    Map<String, Object> attached = call(null, "Target.attachToTarget", Map.of("targetId", target.get("targetId"), "flatten", true));
    session = (String) attached.get("sessionId");
    for (String domain : List.of("Network", "Runtime", "Log", "Page")) call(session, domain + ".enable", Map.of());
    requests.clear();
    errors.clear();
    events.clear();
    call(session, "Page.navigate", Map.of("url", url));
    long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(60);
    while (true) {
      Map<String, Object> e = events.poll(Math.max(1, deadline - System.nanoTime()), TimeUnit.NANOSECONDS);
      if (e == null) throw new IOException("page did not finish loading within 60 s: " + url);
      if ("Page.loadEventFired".equals(e.get("method"))) break;
    }
    Thread.sleep(300); // late requests or errors (fonts, images) still get recorded
    return new Load(List.copyOf(requests), List.copyOf(errors));
  }

  /** Evaluates a JavaScript expression in the page and returns its JSON value. */
  Object evaluate(String expression) throws Exception {
    Map<String, Object> r = call(session, "Runtime.evaluate", Map.of("expression", expression, "returnByValue", true));
    if (r.containsKey("exceptionDetails")) throw new IOException("script failed: " + r.get("exceptionDetails"));
    @SuppressWarnings("unchecked")
    Map<String, Object> result = (Map<String, Object>) r.get("result");
    return result.get("value");
  }

  /** A PNG screenshot of the whole page. */
  void screenshot(Path png) throws Exception {
    Map<String, Object> r = call(session, "Page.captureScreenshot", Map.of("format", "png", "captureBeyondViewport", true));
    Files.createDirectories(png.toAbsolutePath().getParent());
    Files.write(png, Base64.getDecoder().decode((String) r.get("data")));
  }

  private Map<String, Object> call(String sessionId, String method, Map<String, Object> params) throws Exception {
    int id = ids.incrementAndGet();
    CompletableFuture<Map<String, Object>> reply = new CompletableFuture<>();
    pending.put(id, reply);
    StringBuilder msg = new StringBuilder("{\"id\":").append(id).append(",\"method\":").append(Json.quote(method));
    if (sessionId != null) msg.append(",\"sessionId\":").append(Json.quote(sessionId));
    msg.append(",\"params\":").append(json(params)).append('}');
    socket.sendText(msg.toString(), true).join();
    return reply.get(60, TimeUnit.SECONDS);
  }

  private static String json(Object v) {
    if (v instanceof String s) return Json.quote(s);
    if (v instanceof Map<?, ?> m) {
      List<String> parts = new ArrayList<>();
      m.forEach((k, x) -> parts.add(Json.quote((String) k) + ":" + json(x)));
      return "{" + String.join(",", parts) + "}";
    }
    return String.valueOf(v);
  }

  @SuppressWarnings("unchecked")
  private void onMessage(String text) {
    Map<String, Object> m = (Map<String, Object>) Json.parse(text);
    Object id = m.get("id");
    if (id != null) {
      CompletableFuture<Map<String, Object>> f = pending.remove(((Number) id).intValue());
      if (f == null) return;
      if (m.containsKey("error")) f.completeExceptionally(new IOException("DevTools error: " + m.get("error")));
      else f.complete((Map<String, Object>) m.get("result"));
      return;
    }
    String method = (String) m.get("method");
    Map<String, Object> p = (Map<String, Object>) m.getOrDefault("params", Map.of());
    switch (method) {
      case "Network.requestWillBeSent" -> requests.add((String) ((Map<String, Object>) p.get("request")).get("url"));
      case "Runtime.exceptionThrown" -> errors.add("exception: " + p.get("exceptionDetails"));
      case "Runtime.consoleAPICalled" -> {
        if ("error".equals(p.get("type")) || "warning".equals(p.get("type"))) errors.add("console " + p.get("type") + ": " + p.get("args"));
      }
      case "Log.entryAdded" -> {
        Map<String, Object> entry = (Map<String, Object>) p.get("entry");
        if ("error".equals(entry.get("level"))) errors.add("log: " + entry.get("text") + " " + entry.getOrDefault("url", ""));
      }
      default -> { }
    }
    events.add(m);
  }

  private final class Listener implements WebSocket.Listener {
    private final StringBuilder partial = new StringBuilder();

    @Override
    public CompletionStage<?> onText(WebSocket ws, CharSequence data, boolean last) {
      partial.append(data);
      if (last) {
        String text = partial.toString();
        partial.setLength(0);
        onMessage(text);
      }
      ws.request(1);
      return null;
    }
  }

  @Override
  public void close() throws IOException, InterruptedException {
    try {
      socket.sendClose(WebSocket.NORMAL_CLOSURE, "").orTimeout(5, TimeUnit.SECONDS).exceptionally(t -> null).join();
    } finally {
      process.destroy();
      if (!process.waitFor(10, TimeUnit.SECONDS)) process.destroyForcibly().waitFor();
      try (var walk = Files.walk(profile)) {
        for (Path p : walk.sorted(java.util.Comparator.reverseOrder()).toList()) Files.deleteIfExists(p);
      } catch (IOException | java.io.UncheckedIOException ignored) {
        // chromium's helper processes may still add or remove files for a moment (the walk then
        // fails with a file that vanished): the temp folder is cleaned by the OS
      }
    }
  }
}
