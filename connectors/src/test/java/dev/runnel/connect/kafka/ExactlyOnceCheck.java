package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;

import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.common.header.Header;

/**
 * The reference for exactly-once checks: an uninterrupted in-memory run of {@link SumProcessor} over the same
 * input, compared output by output (per partition, in log order) with what the topics hold read_committed.
 */
final class ExactlyOnceCheck {
  final List<List<String>> input;
  final List<List<String>> predictions = new ArrayList<>();
  final List<List<String>> snapshots = new ArrayList<>();
  final List<List<String>> rejects = new ArrayList<>();
  final List<String> checkpoints = new ArrayList<>();

  /** Seeded input: {@code partitions} lists of decimal integers in [-1000, 1000]; every {@code badEvery}-th is not a number (0 = none). */
  static List<List<String>> input(long seed, int partitions, int perPartition, int badEvery) {
    Random r = new Random(seed);
    List<List<String>> in = new ArrayList<>();
    for (int p = 0; p < partitions; p++) {
      List<String> vs = new ArrayList<>(perPartition);
      for (int i = 0; i < perPartition; i++) {
        vs.add(badEvery > 0 && i % badEvery == badEvery - 1 ? "not-a-number-" + i : Integer.toString(r.nextInt(2001) - 1000));
      }
      in.add(vs);
    }
    return in;
  }

  ExactlyOnceCheck(List<List<String>> input) {
    this.input = input;
    for (int p = 0; p < input.size(); p++) {
      List<String> pred = new ArrayList<>();
      List<String> snap = new ArrayList<>();
      List<String> rej = new ArrayList<>();
      SumProcessor proc = new SumProcessor(p);
      proc.restore(null);
      Emitter e = new Emitter() {
        @Override public void prediction(byte[] k, byte[] v) { pred.add(new String(v, StandardCharsets.UTF_8)); }
        @Override public void snapshot(byte[] k, byte[] v) { snap.add(new String(v, StandardCharsets.UTF_8)); }
        @Override public void reject(byte[] k, byte[] v) { rej.add(new String(v, StandardCharsets.UTF_8)); }
      };
      List<String> vs = input.get(p);
      for (int i = 0; i < vs.size(); i++) {
        proc.process(i, 0L, ("k" + i).getBytes(StandardCharsets.UTF_8), vs.get(i).getBytes(StandardCharsets.UTF_8), e);
      }
      predictions.add(pred);
      snapshots.add(snap);
      rejects.add(rej);
      checkpoints.add(new String(proc.checkpoint(), StandardCharsets.US_ASCII));
    }
  }

  int total() {
    int n = 0;
    for (List<String> vs : input) n += vs.size();
    return n;
  }

  /** Asserts every output topic against the reference. */
  void verify(String bootstrap, String name, String inputTopic) {
    verifyTopic(bootstrap, name + ".predictions", predictions, "predictions");
    verifyTopic(bootstrap, name + ".coefficients", snapshots, "snapshots");
    verifyTopic(bootstrap, name + ".rejects", rejects, "rejects");
    Map<String, ConsumerRecord<byte[], byte[]>> last = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bootstrap, name + ".state")) {
      last.put(new String(r.key(), StandardCharsets.UTF_8), r);
    }
    for (int p = 0; p < input.size(); p++) {
      ConsumerRecord<byte[], byte[]> r = last.get(inputTopic + "-" + p);
      assertNotNull(r, "no checkpoint for partition " + p);
      assertEquals(checkpoints.get(p), new String(r.value(), StandardCharsets.US_ASCII), "final checkpoint of partition " + p);
      Header h = r.headers().lastHeader(ExactlyOnceRunner.NEXT_OFFSET_HEADER);
      assertNotNull(h, "checkpoint without offset header, partition " + p);
      assertEquals(Integer.toString(input.get(p).size()), new String(h.value(), StandardCharsets.US_ASCII), "checkpoint offset, partition " + p);
    }
  }

  private void verifyTopic(String bootstrap, String topic, List<List<String>> expected, String what) {
    List<List<String>> actual = new ArrayList<>();
    for (int p = 0; p < expected.size(); p++) actual.add(new ArrayList<>());
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bootstrap, topic)) {
      actual.get(r.partition()).add(new String(r.value(), StandardCharsets.UTF_8));
    }
    for (int p = 0; p < expected.size(); p++) {
      List<String> exp = expected.get(p);
      List<String> act = actual.get(p);
      if (!exp.equals(act)) {
        int firstDiff = 0;
        while (firstDiff < Math.min(exp.size(), act.size()) && exp.get(firstDiff).equals(act.get(firstDiff))) firstDiff++;
        throw new AssertionError(what + " of partition " + p + ": expected " + exp.size() + " records, found " + act.size()
            + "; first difference at index " + firstDiff + ": expected "
            + (firstDiff < exp.size() ? exp.get(firstDiff) : "(none)") + ", found " + (firstDiff < act.size() ? act.get(firstDiff) : "(none)"));
      }
    }
  }
}
