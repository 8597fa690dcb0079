package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.Emitter;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicLong;
import org.apache.kafka.common.TopicPartition;
import org.junit.jupiter.api.Test;

/**
 * Forecasts on request ({@link PipelineProcessor#forecast}) read the partition's model and change nothing:
 * the stream's outputs and checkpoints are the same bits with and without requests (asked between every
 * two records on the processing thread, and all the time from another thread); a request's forecast is the
 * one the stream itself gives the same record at the same point; a bad record gets the stream's reason.
 * No broker: the processor is driven directly, as the runner drives it.
 */
class ReadOnlyForecastTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final TopicPartition TP = new TopicPartition("requests.in", 0);

  /** Every output and checkpoint of one run, in order, as one byte string. */
  private static class Recorder implements Emitter {
    final ByteArrayOutputStream all = new ByteArrayOutputStream();

    private void add(char kind, byte[] value) {
      all.write(kind);
      all.writeBytes(value);
      all.write('\n');
    }

    @Override public void prediction(byte[] key, byte[] value) { add('p', value); }
    @Override public void snapshot(byte[] key, byte[] value) { add('s', value); }
    @Override public void reject(byte[] key, byte[] value) { add('r', value); }
    @Override public void settled(byte[] key, byte[] value) { add('t', value); }
  }

  private static List<byte[]> feed() throws Exception {
    List<byte[]> out = new ArrayList<>();
    for (String line : Files.readAllLines(Path.of("../demo-data/samples/quillmarsh-small.jsonl"))) {
      out.add(line.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  /** The record without its target: a forecast request for the same hub and hour. */
  private static byte[] request(byte[] line) throws Exception {
    JsonNode parsed;
    try {
      parsed = JSON.readTree(line);
    } catch (java.io.IOException e) {
      return line; // the sample's bad lines stay bad requests
    }
    if (!(parsed instanceof ObjectNode n)) {
      return line;
    }
    n.remove("sessions");
    n.put("kind", "forecast");
    return JSON.writeValueAsBytes(n);
  }

  private static byte[] run(PipelineConfig cfg, List<byte[]> feed, boolean withRequests) throws Exception {
    PipelineProcessor p = new PipelineProcessor(cfg, TP);
    p.restore(null);
    Recorder out = new Recorder();
    AtomicBoolean stop = new AtomicBoolean();
    AtomicLong answered = new AtomicLong();
    List<byte[]> requests = new ArrayList<>();
    for (byte[] line : feed) {
      requests.add(request(line));
    }
    Thread other = new Thread(() -> {
      int i = 0;
      while (!stop.get()) {
        PipelineProcessor.Answer a = p.forecast(requests.get(i++ % requests.size()), 0L);
        if (a.prediction() != null) {
          answered.incrementAndGet();
        }
      }
    });
    if (withRequests) {
      other.start();
    }
    try {
      for (int i = 0; i < feed.size(); i++) {
        if (withRequests) {
          p.forecast(requests.get((i * 7) % requests.size()), 0L);
          p.forecast(requests.get(i), 0L);
        }
        byte[] v = feed.get(i);
        p.process(i, 0L, null, v, out);
        if (i % 500 == 499) {
          out.add('c', p.checkpoint());
        }
      }
    } finally {
      stop.set(true);
      other.join();
    }
    out.add('c', p.checkpoint());
    if (withRequests) {
      assertTrue(answered.get() > 0, "the other thread got forecasts");
    }
    return out.all.toByteArray();
  }

  @Test
  void requestsChangeNoBitOfTheStream() throws Exception {
    PipelineConfig cfg = DemoRun.demoConfig();
    List<byte[]> feed = feed();
    byte[] without = run(cfg, feed, false);
    byte[] with = run(cfg, feed, true);
    assertTrue(without.length > 1_000_000, "the run produced outputs: " + without.length);
    assertArrayEquals(without, with, "outputs and checkpoints with and without requests");
  }

  @Test
  void aRequestGetsTheForecastTheStreamGivesTheSameRecord() throws Exception {
    PipelineConfig cfg = DemoRun.demoConfig();
    List<byte[]> feed = feed();
    PipelineProcessor p = new PipelineProcessor(cfg, TP);
    p.restore(null);
    Recorder sink = new Recorder();
    int checked = 0;
    for (int i = 0; i < 3000; i++) {
      p.process(i, 0L, null, feed.get(i), sink);
      if (i % 250 == 249) {
        byte[] req = request(feed.get(i + 1));
        PipelineProcessor.Answer asked = p.forecast(req, 0L);
        assertNull(asked.reason(), asked.detail());
        // the same record sent down the stream (this changes the step's counts, so on the last processor only)
        Recorder one = new Recorder();
        p.process(100_000 + i, 0L, null, req, one);
        byte[] streamed = one.all.toByteArray();
        JsonNode s = JSON.readTree(new String(streamed, 1, streamed.length - 2, StandardCharsets.UTF_8));
        JsonNode a = JSON.readTree(asked.prediction());
        assertEquals("no_target", s.path("status").asText());
        for (String k : new String[] {"status", "event_time", "predicted", "low", "high", "fields"}) {
          assertEquals(s.get(k), a.get(k), k + " at record " + i);
        }
        checked++;
      }
    }
    assertEquals(12, checked);
  }

  @Test
  void aBadRecordGetsTheStreamsRejectReason() throws Exception {
    PipelineConfig cfg = DemoRun.demoConfig();
    PipelineProcessor p = new PipelineProcessor(cfg, TP);
    p.restore(null);
    String[] bad = {
        "{not json",
        "{\"kind\":\"forecast\",\"hub\":\"QM-01\",\"observed_at\":\"2026-03-25T10:00:00+01:00\",\"weather\":\"clear\","
            + "\"temperature_c\":\"warm\",\"price_per_kwh\":0.2}",
        "{\"kind\":\"forecast\",\"hub\":\"QM-01\",\"weather\":\"clear\",\"temperature_c\":3,\"price_per_kwh\":0.2}",
        "[1,2]",
        ""};
    for (String b : bad) {
      byte[] v = b.getBytes(StandardCharsets.UTF_8);
      PipelineProcessor.Answer a = p.forecast(v, 0L);
      assertNotNull(a.reason(), b);
      Recorder r = new Recorder();
      p.process(0, 0L, null, v, r);
      byte[] rej = r.all.toByteArray();
      assertEquals('r', rej[0], b);
      JsonNode n = JSON.readTree(new String(rej, 1, rej.length - 2, StandardCharsets.UTF_8));
      assertEquals(n.path("reason").asText(), a.reason().id(), b);
      assertTrue(a.reason() != RejectReason.PROCESSING_FAILED);
    }
  }

  @Test
  void aRequestDuringARecordSeesTheStateAfterThatWholeRecord() throws Exception {
    PipelineConfig cfg = DemoRun.demoConfig();
    List<byte[]> feed = feed();
    PipelineProcessor busy = new PipelineProcessor(cfg, TP);
    PipelineProcessor reference = new PipelineProcessor(cfg, TP);
    busy.restore(null);
    reference.restore(null);
    Recorder sink = new Recorder();
    int n = 2000;
    for (int i = 0; i < n; i++) {
      busy.process(i, 0L, null, feed.get(i), sink);
      reference.process(i, 0L, null, feed.get(i), sink);
    }
    byte[] req = request(feed.get(n + 1));
    // the next record's prediction is held up inside the record (the processor's lock is held), and a
    // request is made meanwhile: it must wait, and then see the state after that record, never before or half
    java.util.concurrent.CountDownLatch inside = new java.util.concurrent.CountDownLatch(1);
    java.util.concurrent.CountDownLatch release = new java.util.concurrent.CountDownLatch(1);
    Emitter blocking = new Recorder() {
      @Override public void prediction(byte[] key, byte[] value) {
        inside.countDown();
        try {
          release.await();
        } catch (InterruptedException e) {
          Thread.currentThread().interrupt();
        }
      }
    };
    Thread runner = new Thread(() -> busy.process(n, 0L, null, feed.get(n), blocking));
    runner.start();
    inside.await();
    java.util.concurrent.CompletableFuture<PipelineProcessor.Answer> asked =
        java.util.concurrent.CompletableFuture.supplyAsync(() -> busy.forecast(req, 0L));
    Thread.sleep(50); // not a timing assertion: only gives the request time to be queued behind the record
    assertTrue(!asked.isDone(), "the request waits for the record being processed");
    release.countDown();
    PipelineProcessor.Answer a = asked.get(60, java.util.concurrent.TimeUnit.SECONDS);
    runner.join();
    reference.process(n, 0L, null, feed.get(n), sink);
    PipelineProcessor.Answer expected = reference.forecast(req, 0L);
    assertNull(a.reason(), a.detail());
    assertArrayEquals(expected.prediction(), a.prediction(), "the state after the whole record");
    PipelineProcessor.Answer before = new PipelineProcessor(cfg, TP).forecast(req, 0L);
    assertTrue(!java.util.Arrays.equals(before.prediction(), a.prediction()), "a fresh model answers differently");
  }
}
