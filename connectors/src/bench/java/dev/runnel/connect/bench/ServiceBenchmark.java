package dev.runnel.connect.bench;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.launch.LivePipeline;
import dev.runnel.core.config.PipelineConfig;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;
import org.HdrHistogram.Histogram;

/**
 * Forecasts on request, measured on the embedded broker with the live pipeline as {@code run} wires it
 * (web server included):
 * <ol>
 *   <li><b>load</b>: a 1-partition topic pre-loaded with {@code --records} invented demo records (seeded);</li>
 *   <li><b>throughput with and without requests</b>, in one run: while the runner works through the topic, the
 *       time is cut into {@code --window-ms} windows that alternate between no requests and
 *       {@code --rate} single-record {@code POST /forecast} requests a second (paced, from
 *       {@code --senders} threads, 8 by default); records processed per second are compared window by window,
 *       each "on" window against the mean of the "off" windows beside it (the first {@code --skip-windows}, 6 by
 *       default, are warm-up and left out);</li>
 *   <li><b>latency</b>: once the input is done, {@code --requests} single-record requests one after another
 *       over loopback (HTTP/1.1, one kept-alive connection), each timed from send to the whole answer read
 *       (HdrHistogram, microseconds), after {@code --warmup} untimed ones.</li>
 * </ol>
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.ServiceBenchmark --records 1500000 --out docs/bench/service-results.md
 * }</pre>
 */
public final class ServiceBenchmark {
  private ServiceBenchmark() { }

  private static final com.fasterxml.jackson.databind.ObjectMapper JSON = new com.fasterxml.jackson.databind.ObjectMapper();

  public static void main(String[] args) throws Exception {
    long records = 1_500_000;
    int rate = 1000;
    int senders = 8;
    int skip = 6;
    boolean health = false;
    long windowMs = 2000;
    int requests = 20_000;
    int warmup = 5_000;
    Path out = null;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--records" -> records = Long.parseLong(args[++i]);
        case "--rate" -> rate = Integer.parseInt(args[++i]);
        case "--senders" -> senders = Integer.parseInt(args[++i]);
        case "--window-ms" -> windowMs = Long.parseLong(args[++i]);
        case "--skip-windows" -> skip = Integer.parseInt(args[++i]);
        case "--load-health" -> health = true;
        case "--requests" -> requests = Integer.parseInt(args[++i]);
        case "--warmup" -> warmup = Integer.parseInt(args[++i]);
        case "--out" -> out = Path.of(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; use --records N --rate R --senders N --window-ms MS --skip-windows N --requests N --warmup N --out FILE");
      }
    }
    Path folder = Files.createTempDirectory("runnel-service-bench");
    String topic = "svc.in";
    StringBuilder report = new StringBuilder();
    try (EmbeddedBroker broker = new EmbeddedBroker(folder, 0, 0, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "1g")) {
      broker.start();
      String bs = broker.bootstrapServers();
      EndToEndBenchmark.createTopic(bs, topic);
      long t0 = System.nanoTime();
      long loaded = EndToEndBenchmark.load(bs, topic, records);
      log("loaded %,d records in %.1f s", loaded, (System.nanoTime() - t0) / 1e9);
      List<byte[]> bodies = requestBodies(2000);
      PipelineConfig cfg = DemoRun.demoConfig().withNameAndTopic("svc", topic);
      PrintStream quiet = new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8);
      try (LivePipeline live = LivePipeline.connect(cfg, new LivePipeline.Options(bs, null, -1, "0", 0, true, false, "bench"),
          quiet, null)) {
        live.startRunner();
        String url = live.webUrl() + "forecast";
        // --load-health: the load is GET /health instead (no model, no lock): what the HTTP exchange alone costs
        String loadUrl = live.webUrl() + (health ? "health" : "forecast");
        boolean get = health;
        HttpClient http = HttpClient.newBuilder().version(HttpClient.Version.HTTP_1_1).build();
        while (live.runner().notReady() != null || live.runner().counters().recordsIn() == 0) {
          Thread.sleep(20);
        }
        // throughput: alternating windows without and with requests
        AtomicBoolean load = new AtomicBoolean();
        AtomicBoolean stop = new AtomicBoolean();
        AtomicLong sent = new AtomicLong();
        AtomicLong failed = new AtomicLong();
        List<Thread> threads = new ArrayList<>();
        double perSender = (double) rate / senders;
        for (int s = 0; s < senders; s++) {
          int seed = s;
          Thread t = new Thread(() -> send(http, loadUrl, get, bodies, seed, perSender, load, stop, sent, failed), "bench-sender-" + s);
          t.setDaemon(true);
          t.start();
          threads.add(t);
        }
        List<double[]> windows = new ArrayList<>(); // {withRequests 0/1, records/s, requests/s}
        boolean with = false;
        while (live.runner().counters().recordsIn() < loaded * 0.95 && live.running()) {
          load.set(with);
          long r0 = live.runner().counters().recordsIn();
          long q0 = sent.get();
          long w0 = System.nanoTime();
          Thread.sleep(windowMs);
          long r1 = live.runner().counters().recordsIn();
          long q1 = sent.get();
          double secs = (System.nanoTime() - w0) / 1e9;
          if (r1 >= loaded) {
            break; // the input ran out inside the window
          }
          windows.add(new double[] {with ? 1 : 0, (r1 - r0) / secs, (q1 - q0) / secs});
          with = !with;
        }
        load.set(false);
        while (live.runner().counters().recordsIn() < loaded && live.running()) {
          Thread.sleep(50);
        }
        stop.set(true);
        for (Thread t : threads) {
          t.join(5000);
        }
        report.append(throughputTable(windows, skip, rate, senders, windowMs, loaded, failed.get()));
        // latency, one request after another on one connection, the stream idle
        Histogram h = new Histogram(3_600_000_000L, 3);
        for (int i = 0; i < warmup + requests; i++) {
          byte[] b = bodies.get(i % bodies.size());
          long s0 = System.nanoTime();
          HttpResponse<byte[]> r = http.send(HttpRequest.newBuilder(URI.create(url)).POST(HttpRequest.BodyPublishers.ofByteArray(b))
              .build(), HttpResponse.BodyHandlers.ofByteArray());
          long us = (System.nanoTime() - s0) / 1000;
          if (r.statusCode() != 200 && r.statusCode() != 400) {
            throw new IllegalStateException("a forecast request got " + r.statusCode() + ": " + new String(r.body(), StandardCharsets.UTF_8));
          }
          if (i >= warmup) {
            h.recordValue(Math.max(1, us));
          }
        }
        report.append(String.format(Locale.ROOT, "%nLatency of single-record `POST /forecast` over loopback (%,d requests after %,d"
            + " untimed, one after another on one HTTP/1.1 connection, the stream idle; HdrHistogram, microseconds):%n%n"
            + "| p50 | p90 | p99 | p99.9 | max |%n|---|---|---|---|---|%n| %,d | %,d | %,d | %,d | %,d |%n",
            requests, warmup, h.getValueAtPercentile(50), h.getValueAtPercentile(90), h.getValueAtPercentile(99),
            h.getValueAtPercentile(99.9), h.getMaxValue()));
      }
    }
    String text = "Generated by `dev.runnel.connect.bench.ServiceBenchmark` (" + String.join(" ", args) + ") on "
        + Runtime.getRuntime().availableProcessors() + " cores, Java " + System.getProperty("java.version") + ".\n\n" + report;
    System.out.println(text);
    if (out != null) {
      Files.writeString(out, text);
    }
  }

  private static String throughputTable(List<double[]> windows, int skip, int rate, int senders, long windowMs, long loaded,
                                        long failed) {
    StringBuilder sb = new StringBuilder();
    sb.append(String.format(Locale.ROOT, "Stream throughput with and without %,d requests a second (%d senders), one run over %,d"
        + " records, %,d ms windows alternating (the first %d are warm-up, left out):%n%n| window | requests | requests/s | records/s |%n"
        + "|---|---|---|---|%n", rate, senders, loaded, windowMs, skip));
    double sumWith = 0;
    double sumWithout = 0;
    int nWith = 0;
    int nWithout = 0;
    List<Double> ratios = new ArrayList<>();
    for (int i = 0; i < windows.size(); i++) {
      double[] w = windows.get(i);
      sb.append(String.format(Locale.ROOT, "| %d | %s | %,.0f | %,.0f |%n", i + 1, w[0] == 1 ? "on" : "off", w[2], w[1]));
      if (i < skip) {
        continue;
      }
      if (w[0] == 1) {
        sumWith += w[1];
        nWith++;
        // against the mean of the "off" windows on both sides, so a trend in the stream's own speed cancels
        double off = i + 1 < windows.size() ? (windows.get(i - 1)[1] + windows.get(i + 1)[1]) / 2 : windows.get(i - 1)[1];
        ratios.add(w[1] / off);
      } else {
        sumWithout += w[1];
        nWithout++;
      }
    }
    ratios.sort(Double::compare);
    double median = ratios.isEmpty() ? Double.NaN : ratios.get(ratios.size() / 2);
    sb.append(String.format(Locale.ROOT, "%nMean records/s without requests %,.0f (%d windows), with %,.0f (%d windows): %+.1f %%;"
        + " median ratio of each \"on\" window to the mean of the \"off\" windows beside it %.3f (%d pairs). Failed requests: %d.%n",
        sumWithout / Math.max(1, nWithout), nWithout, sumWith / Math.max(1, nWith), nWith,
        100 * ((sumWith / Math.max(1, nWith)) / (sumWithout / Math.max(1, nWithout)) - 1), median, ratios.size(), failed));
    return sb.toString();
  }

  /** Sends paced requests while {@code load} is set. */
  private static void send(HttpClient http, String url, boolean get, List<byte[]> bodies, int seed, double perSecond, AtomicBoolean load,
                           AtomicBoolean stop, AtomicLong sent, AtomicLong failed) {
    long gap = (long) (1e9 / perSecond);
    long next = System.nanoTime();
    int i = seed * 997;
    while (!stop.get()) {
      if (!load.get()) {
        sleepNanos(1_000_000);
        next = System.nanoTime();
        continue;
      }
      long now = System.nanoTime();
      if (now < next) {
        sleepNanos(next - now);
        continue;
      }
      next += gap;
      try {
        HttpRequest.Builder b = HttpRequest.newBuilder(URI.create(url));
        HttpRequest req = get ? b.GET().build() : b.POST(HttpRequest.BodyPublishers.ofByteArray(bodies.get(i++ % bodies.size()))).build();
        HttpResponse<Void> r = http.send(req, HttpResponse.BodyHandlers.discarding());
        if (r.statusCode() == 200) {
          sent.incrementAndGet();
        } else {
          failed.incrementAndGet();
        }
      } catch (Exception e) {
        failed.incrementAndGet();
      }
    }
  }

  private static void sleepNanos(long n) {
    try {
      Thread.sleep(n / 1_000_000, (int) (n % 1_000_000));
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
    }
  }

  /** Demo records without their target: forecast requests. */
  private static List<byte[]> requestBodies(int n) {
    List<byte[]> out = new ArrayList<>();
    Iterator<String> it = EndToEndBenchmark.demoLines(n * 2L);
    while (it.hasNext() && out.size() < n) {
      // the generator's records that the stream accepts (it also makes bad ones on purpose), without the target
      com.fasterxml.jackson.databind.JsonNode rec;
      try {
        rec = JSON.readTree(it.next());
      } catch (java.io.IOException e) {
        continue;
      }
      if (rec.path("sessions").isNumber() && rec.path("temperature_c").isNumber() && rec.path("price_per_kwh").isNumber()
          && rec.path("hub").isTextual() && rec.path("weather").isTextual() && rec.path("observed_at").isTextual()) {
        ((com.fasterxml.jackson.databind.node.ObjectNode) rec).remove("sessions");
        out.add(rec.toString().getBytes(StandardCharsets.UTF_8));
      }
    }
    return out;
  }

  private static void log(String fmt, Object... args) {
    System.err.println("[service] " + String.format(Locale.ROOT, fmt, args));
  }
}
