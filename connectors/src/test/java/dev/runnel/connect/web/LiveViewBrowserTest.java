package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.drift.DriftTable;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.demo.GeneratedRecord;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
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
import java.util.Map;
import java.util.concurrent.TimeUnit;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The live view against a real pipeline on the embedded broker: the invented Quillmarsh feed (12
 * days) runs through the exactly-once runner; the view follows the output topics; the JSON
 * endpoint and the {@code drift} table are checked; then the page is loaded in a real headless
 * chromium, which must draw one coefficient path per shown weight and points in the
 * predicted-vs-actual chart. A screenshot is saved as {@code target/live-view.png}.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class LiveViewBrowserTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  static PipelineConfig config(String name, String topic) {
    return DemoRun.demoConfig().withNameAndTopic(name, topic);
  }

  static Path chromium() {
    for (String p : List.of("/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/lib/chromium/chromium")) {
      if (Files.isExecutable(Path.of(p))) {
        return Path.of(p);
      }
    }
    return null;
  }

  @Test
  void pageDrawsCoefficientPathsAndPredictionsFromARunningPipeline(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "liveview";
    String topic = name + ".sessions";
    KafkaTestSupport.createTopic(bs, topic, 1);
    QuillmarshGenerator gen = new QuillmarshGenerator(Settings.defaults().withDays(12).withSeed(20260105L));
    List<String> lines = new ArrayList<>();
    Map<String, Object> pc = KafkaTestSupport.producerConfig(bs);
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(pc, new ByteArraySerializer(), new ByteArraySerializer())) {
      Iterator<GeneratedRecord> it = gen.recordIterator();
      while (it.hasNext()) {
        GeneratedRecord g = it.next();
        lines.add(g.line());
        // keyed by hub, as the demo feed is: the page draws one series per key
        producer.send(new ProducerRecord<>(topic, g.hubId().getBytes(StandardCharsets.UTF_8),
            g.line().getBytes(StandardCharsets.UTF_8)));
      }
      producer.flush();
    }
    PipelineConfig cfg = config(name, topic);
    RunnerSettings rs = RunnerSettings.of(name, topic, bs).withCommitInterval(300, 2000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(rs, PipelineProcessor.factory(cfg));
    Thread work = new Thread(runner, "liveview-runner");
    work.setDaemon(true);
    work.start();
    try (LiveState state = new LiveState(name, bs, Map.of(), runner::counters).start();
         WebView web = WebView.start("127.0.0.1", 0, false, state)) {
      long expectedSnapshots = 12 * 4 - 1; // a snapshot every 6 h of event time over 12 days (the first period opens the clock)
      KafkaTestSupport.await("the view read the run's snapshots", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError(runner.failure());
        }
        return runner.counters().recordsIn() >= lines.size()
            && state.stateJson().path("throughput").path("snapshots_read").asLong() >= expectedSnapshots - 1;
      });

      // the JSON endpoint over HTTP
      HttpClient http = HttpClient.newHttpClient();
      HttpResponse<String> r = http.send(HttpRequest.newBuilder(URI.create(web.url() + "api/state")).build(),
          HttpResponse.BodyHandlers.ofString());
      assertEquals(200, r.statusCode());
      JsonNode s = JSON.readTree(r.body());
      Files.writeString(Path.of("target", "live-state.json"), r.body()); // kept beside the screenshot, to look at
      assertEquals(name, s.path("pipeline").asText());
      assertTrue(s.path("predictions").size() > 100, "predictions kept: " + s.path("predictions").size());
      int shown = s.path("shown_columns").size();
      assertEquals(LiveState.SHOWN_WEIGHTS, shown);
      assertEquals(shown, s.path("coefficient_paths").size());
      assertTrue(s.path("coefficient_paths").get(0).path("points").size() > 10);
      assertTrue(s.path("latest").path("vocabularies").size() == 2, "hub and weather vocabularies");
      assertTrue(s.path("latest").path("drift").path("error_test").asText().equals("page_hinkley"));
      assertTrue(s.path("throughput").path("records_in").asLong() >= lines.size());
      // format 2 names (docs/formats.md): the page reads these
      assertEquals(2, s.path("format").asInt());
      assertTrue(s.path("throughput").has("records_behind"), s.path("throughput").toString());
      assertTrue(s.path("latest").path("standardization").size() > 0, "running means and spreads");
      assertTrue(s.path("latest").path("vocabularies").get(0).has("below_min_count"));
      HttpResponse<String> page = http.send(HttpRequest.newBuilder(URI.create(web.url())).build(),
          HttpResponse.BodyHandlers.ofString());
      assertTrue(page.body().contains("<svg") || page.body().contains("createElementNS"), "the page draws SVG");

      // the drift verb's table on the same topic: one line per snapshot plus the header
      ByteArrayOutputStream buf = new ByteArrayOutputStream();
      int rc = dev.runnel.connect.cli.DriftCommandAccess.print(bs, name + ".coefficients",
          new DriftTable("first", 3, null, null), new PrintStream(buf, true, StandardCharsets.UTF_8));
      assertEquals(0, rc);
      // (the demo has input.forecast, so each snapshot's line is followed by its errors by horizon)
      String[] table = buf.toString(StandardCharsets.UTF_8).split("\n");
      long snaps = s.path("throughput").path("snapshots_read").asLong();
      List<String> snapshotLines = java.util.Arrays.stream(table).filter(l -> l.matches("^\\d+\\s+2026-.*")).toList();
      assertEquals(snaps, snapshotLines.size(), "one line per snapshot");
      assertTrue(!table[0].matches("^\\d+\\s+2026-.*"), "a header first: " + table[0]);
      String last = snapshotLines.get(snapshotLines.size() - 1);
      assertTrue(last.matches("^" + (snaps - 1) + "\\s+2026-.*\\(.*[+-]\\d+\\.\\d\\).*"), last);

      // the page in a real browser
      Path chromium = chromium();
      Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: install it (apt-get install"
          + " chromium; .ci/run does this) to run the browser check; the JSON endpoint was checked above");
      Path profile = Files.createTempDirectory("runnel-chromium");
      List<String> common = List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
          "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=15000", "--window-size=1280,1400");
      List<String> dump = new ArrayList<>(common);
      dump.add("--dump-dom");
      dump.add(web.url());
      String dom = run(dump);
      Matcher m = Pattern.compile("data-shown-weights=\"(\\d+)\"").matcher(dom);
      assertTrue(m.find(), "the page finished a refresh: " + dom.substring(0, Math.min(400, dom.length())));
      int shownInPage = Integer.parseInt(m.group(1));
      assertEquals(LiveState.SHOWN_WEIGHTS, shownInPage);
      assertEquals(shownInPage, count(dom, "<path[^>]*data-weight=\""), "one coefficient path per shown weight");
      assertEquals(shownInPage, count(dom, "<path[^>]*data-band=\"(?!interval)"), "one ±2 se band per shown weight");
      assertTrue(count(dom, "<circle[^>]*data-point=\"actual\"") > 10, "points in the predicted-vs-actual chart");
      assertEquals(1, count(dom, "<path[^>]*data-series=\"predicted\""));
      // forecasts ahead: one entry per hub (the Kafka key); the feed ends with the actuals of its last hours, so
      // nothing is ahead at its end, and the first hub's latest actuals are drawn
      JsonNode ahead = s.path("forecasts_ahead").path("entities");
      assertEquals(13, ahead.size(), "one entry per hub");
      assertEquals("QM-01", ahead.get(0).path("entity").asText());
      assertEquals(LiveState.MAX_AHEAD_ACTUALS, ahead.get(0).path("actuals").size());
      assertEquals(LiveState.MAX_AHEAD_ACTUALS, count(dom, "<circle[^>]*data-point=\"ahead-actual\""), "the first hub's actuals drawn");
      Path shot = Path.of("target", "live-view.png").toAbsolutePath();
      Files.deleteIfExists(shot);
      List<String> pic = new ArrayList<>(common);
      pic.add("--screenshot=" + shot);
      pic.add(web.url());
      run(pic);
      assertTrue(Files.size(shot) > 10_000, "screenshot written: " + shot);
      EmbeddedKafkaExtension.deleteTree(profile);
    } finally {
      runner.close();
      work.join(30_000);
    }
    assertNull(runner.failure());
  }

  static int count(String text, String regex) {
    Matcher m = Pattern.compile(regex).matcher(text);
    int n = 0;
    while (m.find()) {
      n++;
    }
    return n;
  }

  static String run(List<String> cmd) throws Exception {
    Path log = Files.createTempFile("runnel-chromium", ".log");
    Process p = new ProcessBuilder(cmd).redirectError(log.toFile()).start();
    byte[] out = p.getInputStream().readAllBytes();
    if (!p.waitFor(120, TimeUnit.SECONDS)) {
      p.destroyForcibly();
      throw new AssertionError("chromium did not finish within 120 s");
    }
    String err = Files.readString(log);
    Files.deleteIfExists(log);
    assertEquals(0, p.exitValue(), "chromium failed: " + err);
    return new String(out, StandardCharsets.UTF_8);
  }
}
