package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.charset.StandardCharsets;
import java.util.List;
import java.util.Random;
import java.util.function.Consumer;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.function.Executable;

/**
 * What a {@link GlobalModel} refuses, and the edges it accepts: its constructor's arguments, layout
 * events out of range, shares that disagree on the constant term or on its name, that need a
 * shift without a constant, that are stated more than 64 half-lives ahead or hold entries beyond
 * {@link RlsModel#MAX_ABS_INPUT} at their weight; and checkpoints with a value out of range in
 * every header field and every field of a column (the bytes changed in place at offsets worked
 * out here from the layout {@link java.io.DataOutput} gives the fields). Shares here are built by
 * {@link ModelShare}'s constructor, not by a model, so their numbers are known exactly; the
 * fold's weight {@code 2^(-(t1 - t0)/h)} is read back as the leverage {@code 1/(w s^2)} of a
 * one-column view without prior (common practice: {@code x^T (X^T W X)^-1 x}).
 */
class GlobalModelRefusalsTest {

  static final double H = 1000;
  static final ModelSettings PLAIN =
      ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE).withWindupGuard(false);
  static final ModelSettings NO_CONSTANT = PLAIN.withConstantTerm(false);

  static ModelShare share(int source, long seq, long time, String[] names, double[] offsets, double[] scales,
      int constant, double[][] rows, double[] targets) {
    return new ModelShare(source, seq, time, names, offsets, scales, new boolean[names.length], constant, rows,
        targets, 0.5, 4.0);
  }

  /** One column "price" without constant, basis (0, 1): S = [[s]], u = [u]. */
  static ModelShare priceShare(long seq, long time, double s, double u, double offset, double scale) {
    return share(1, seq, time, new String[] {"price"}, new double[] {offset}, new double[] {scale}, -1,
        new double[][] {{s}}, new double[] {u});
  }

  static ModelShare constantShare(long seq, String constantName) {
    return share(1, seq, 0, new String[] {constantName, "price"}, new double[2], new double[] {1, 1}, 0,
        new double[][] {{2, 1}, {0, 3}}, new double[] {1, 2});
  }

  static byte[] bytes(GlobalModel g) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    g.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static GlobalModel read(byte[] b) throws IOException {
    return GlobalModel.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
  }

  static void refused(Class<? extends Throwable> type, Executable call, String... words) {
    Throwable e = assertThrows(type, call);
    for (String w : words) {
      assertTrue(e.getMessage().contains(w), "expected \"" + w + "\" in: " + e.getMessage());
    }
  }

  @Test
  void theConstructorRefusesItsArgumentsByName() {
    String[] cols = {"constant", "price"};
    refused(IllegalArgumentException.class, () -> new GlobalModel(-1, cols, PLAIN, H), "partition", "-1");
    refused(IllegalArgumentException.class, () -> new GlobalModel(0, cols, PLAIN, 0.0), "halfLifeMillis", "0.0");
    refused(IllegalArgumentException.class, () -> new GlobalModel(0, cols, PLAIN, -5), "halfLifeMillis", "-5");
    refused(IllegalArgumentException.class, () -> new GlobalModel(0, cols, PLAIN, Double.NaN), "halfLifeMillis", "NaN");
    refused(IllegalArgumentException.class, () -> new GlobalModel(0, new String[] {"constant", "a", "a"}, PLAIN, H),
        "initialColumns[2]", "\"a\"");
    refused(IllegalArgumentException.class, () -> new GlobalModel(0, new String[] {"constant", ""}, PLAIN, H),
        "initialColumns[1]");
    // the edges: partition 0, the smallest positive half-life, none
    assertEquals(2, new GlobalModel(0, cols, PLAIN, Double.MIN_VALUE).localDimension());
    assertEquals(2, new GlobalModel(0, cols, PLAIN, Double.POSITIVE_INFINITY).localDimension());
  }

  @Test
  void layoutEventsOutOfRangeAreRefusedByName() {
    GlobalModel g = new GlobalModel(0, new String[] {"constant", "price", "temp"}, PLAIN, H);
    refused(IllegalArgumentException.class, () -> g.columnRemoved(0), "columnRemoved", "[1, 2]", "got 0");
    refused(IllegalArgumentException.class, () -> g.columnRemoved(3), "[1, 2]", "got 3");
    refused(IllegalArgumentException.class, () -> g.columnRebased(-1, 2, 0), "columnRebased", "[0, 2]", "got -1");
    refused(IllegalArgumentException.class, () -> g.columnRebased(3, 2, 0), "[0, 2]", "got 3");
    refused(IllegalArgumentException.class, () -> g.columnAdded(4, "x", true), "local dimension 3", "got 4");
    refused(IllegalArgumentException.class, () -> g.columnAdded(2, "x", true), "local dimension 3", "got 2");
    refused(IllegalStateException.class, () -> g.columnAdded(3, "constant", false), "constant", "twice");
    refused(IllegalStateException.class, () -> g.columnAdded(3, "temp", false), "temp", "twice");
    g.columnRebased(2, 2.0, 1.0); // the last local column: accepted
    assertEquals(1.0, g.viewOffset(2), 0.0);
    assertEquals(2.0, g.viewScale(2), 0.0);
    g.columnRemoved(2);
    assertEquals(2, g.localDimension());
    // without a constant term, column 0 is an ordinary column and may go
    GlobalModel n = new GlobalModel(0, new String[] {"price", "temp"}, NO_CONSTANT, H);
    n.columnRebased(0, 2.0, 0.0); // column 0 may be re-based too
    assertEquals(2.0, n.viewScale(0), 0.0);
    n.columnRemoved(0);
    assertEquals(1, n.localDimension());
    refused(IllegalArgumentException.class, () -> n.columnRemoved(1), "[0, 0]", "got 1");
  }

  @Test
  void aShareThatDisagreesOnTheConstantIsRefusedWithTheStateUnchanged() throws IOException {
    GlobalModel with = new GlobalModel(0, new String[] {"constant", "price"}, PLAIN, H);
    GlobalModel without = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, H);
    byte[] w0 = bytes(with);
    byte[] n0 = bytes(without);
    refused(IllegalArgumentException.class, () -> without.fold(constantShare(1, "constant"), 0),
        "share 1 of partition 1 has constant term, this model has no one", "model.constant_term");
    refused(IllegalArgumentException.class, () -> with.fold(priceShare(1, 0, 2, 1, 0, 1), 0),
        "share 1 of partition 1 has no constant term, this model has one");
    refused(IllegalArgumentException.class, () -> with.fold(constantShare(1, "intercept"), 0),
        "names its constant intercept, this model constant");
    assertArrayEquals(w0, bytes(with));
    assertArrayEquals(n0, bytes(without));
    assertEquals(GlobalModel.FoldResult.FOLDED, with.fold(constantShare(1, "constant"), 0));
  }

  @Test
  void withoutAConstantAScaleIsFoldedAndAShiftIsRefused() throws IOException {
    GlobalModel g = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, Double.POSITIVE_INFINITY);
    byte[] before = bytes(g);
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(1, 0, 2, 3, 0.5, 1), 0),
        "column price of share 1 of partition 1 needs a shift", "no constant term");
    assertArrayEquals(before, bytes(g));
    // the share's basis (0, 2): its entry of a value v is v / 2, the view's is v = 2 (v / 2).
    // S = [[4]], u = [6]: in the share's basis the weight is u / s = 1.5, in the view's 1.5 / 2;
    // the row in the view's basis is 2 * 4 = 8, so the information is 64 and the leverage of 1 is 1/64
    assertEquals(GlobalModel.FoldResult.FOLDED, g.fold(priceShare(1, 0, 4, 6, 0, 2), 0));
    double[] w = new double[1];
    g.localWeights(w);
    assertEquals(0.75, w[0], 1e-15);
    assertEquals(1.0 / 64, g.leverage(new double[] {1}), 1e-17);
  }

  @Test
  void aShareWeighsTwoToTheMinusItsAgeInHalfLives() {
    // S = [[2]]: the information of a weight w is 4 w, the leverage of x = 1 is 1 / (4 w)
    long t0 = 1_000_000;
    long[] nows = {t0, t0 + 1500, t0 + 20_000, t0 - 700, t0 - 64_000};
    for (long now : nows) {
      GlobalModel g = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, H);
      assertEquals(GlobalModel.FoldResult.FOLDED, g.fold(priceShare(1, t0, 2, 1, 0, 1), now));
      double w = Math.pow(2.0, -(now - t0) / H);
      assertEquals(1.0 / (4 * w), g.leverage(new double[] {1}), 1e-12 / (4 * w), "fold at t0 + " + (now - t0));
    }
    // without forgetting the age does not count
    GlobalModel g = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, Double.POSITIVE_INFINITY);
    g.fold(priceShare(1, t0, 2, 1, 0, 1), t0 + 123_456_789);
    assertEquals(0.25, g.leverage(new double[] {1}), 1e-15);
    // one millisecond more than 64 half-lives ahead is refused
    GlobalModel late = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, H);
    refused(IllegalArgumentException.class, () -> late.fold(priceShare(1, t0, 2, 1, 0, 1), t0 - 64_001),
        "more than 64.0 half-lives after this clock");
    assertEquals(0, late.lastFolded(1));
  }

  @Test
  void entriesBeyondTheInputLimitAtTheirWeightAreRefused() throws IOException {
    long t0 = 0;
    // 1e99 is within 1e100; folded 14 half-lives ahead its rows count sqrt(2^14) = 128 times
    GlobalModel g = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, H);
    byte[] before = bytes(g);
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(1, t0, 1e99, 1, 0, 1), t0 - 14_000),
        "has an entry out of range in this view's basis: 1.0E99");
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(1, t0, 1, 1e99, 0, 1), t0 - 14_000),
        "has a target out of range: 1.0E99");
    // in the view's basis (0, 1) an entry 1e99 of a share in basis (0, 100) is 1e101
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(1, t0, 1e99, 1, 0, 100), t0),
        "out of range in this view's basis");
    assertArrayEquals(before, bytes(g));
    // 1e100 itself is within the limit
    assertEquals(GlobalModel.FoldResult.FOLDED, g.fold(priceShare(1, t0, 1e100, 1e100, 0, 1), t0));
  }

  @Test
  void sharesAreFoldedInOrderOncePerSourceAndNeverOwnOnes() {
    GlobalModel g = new GlobalModel(0, new String[] {"price"}, NO_CONSTANT, Double.POSITIVE_INFINITY);
    refused(IllegalArgumentException.class, () -> g.fold(share(0, 1, 0, new String[] {"price"}, new double[1],
        new double[] {1}, -1, new double[][] {{1}}, new double[] {1}), 0), "share 1 is this partition's (0) own");
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(2, 0, 1, 1, 0, 1), 0),
        "share 2 of partition 1 cannot be folded before share 1");
    assertEquals(GlobalModel.FoldResult.FOLDED, g.fold(priceShare(1, 0, 1, 1, 0, 1), 0));
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, g.fold(priceShare(1, 0, 5, 1, 0, 1), 0));
    refused(IllegalArgumentException.class, () -> g.fold(priceShare(3, 0, 1, 1, 0, 1), 0), "before share 2");
    assertEquals(GlobalModel.FoldResult.FOLDED, g.fold(priceShare(2, 0, 1, 1, 0, 1), 0));
    assertEquals(2L, g.lastFolded(1));
    assertEquals(0.5, g.leverage(new double[] {1}), 1e-15, "two shares of information 1 each");
  }

  /** A model of partition 1 that folded from partitions 0 and 2, and kept a removed column. */
  static GlobalModel twoSources() {
    GlobalModel g = new GlobalModel(1, new String[] {"constant", "price", "site=a", "site=b", "site=c"}, PLAIN, H);
    Random rnd = new Random(4);
    for (int i = 0; i < 20; i++) {
      double[] x = {1, rnd.nextGaussian(), i % 4 == 0 ? 1 : 0, i % 4 == 1 ? 1 : 0, i % 4 == 2 ? 1 : 0};
      g.update(x, x[1] + rnd.nextGaussian(), 0.99, null);
    }
    g.fold(share(0, 1, 0, new String[] {"constant", "price"}, new double[2], new double[] {1, 1}, 0,
        new double[][] {{2, 1}, {0, 3}}, new double[] {1, 2}), 0);
    g.fold(share(2, 1, 0, new String[] {"constant", "price"}, new double[2], new double[] {1, 1}, 0,
        new double[][] {{2, 1}, {0, 3}}, new double[] {1, 2}), 0);
    g.columnRemoved(2); // site=a: kept in the view with local index -1; site=b and site=c move down
    return g;
  }

  /** The checkpoint with {@code change} applied to its bytes. */
  static byte[] changed(byte[] good, Consumer<ByteBuffer> change) {
    byte[] b = good.clone();
    change.accept(ByteBuffer.wrap(b)); // big-endian, as DataOutput writes
    return b;
  }

  /** Offset of the view's column {@code k}'s fields after its name: names before it as UTF with a 2-byte length. */
  static int column(List<String> names, int k) {
    int at = 60 + 4; // magic, version, partition, half-life, local, next share, sources, 2 sources; the count
    for (int j = 0; j < k; j++) {
      at += 2 + names.get(j).getBytes(StandardCharsets.UTF_8).length + 8 + 8 + 1 + 4;
    }
    return at + 2 + names.get(k).getBytes(StandardCharsets.UTF_8).length;
  }

  static void badCheckpoint(byte[] b, String... words) {
    refused(IOException.class, () -> read(b), words);
  }

  @Test
  void aCheckpointWithAHeaderFieldOutOfRangeIsRefusedByName() throws IOException {
    GlobalModel g = twoSources();
    byte[] good = bytes(g);
    assertArrayEquals(good, bytes(read(good)), "partition 1 with sources 0 and 2 reads back");
    badCheckpoint(changed(good, b -> b.putInt(0, 0x524e4732)), "not a global model checkpoint");
    badCheckpoint(changed(good, b -> b.putInt(4, 0)), "format version 0 is not supported");
    int next = GlobalModel.FORMAT_VERSION + 1;
    badCheckpoint(changed(good, b -> b.putInt(4, next)), "format version " + next + " is not supported");
    badCheckpoint(changed(good, b -> b.putInt(8, -1)), "corrupt global model checkpoint", "partition -1");
    badCheckpoint(changed(good, b -> b.putDouble(12, 0.0)), "half-life 0.0 ms");
    badCheckpoint(changed(good, b -> b.putDouble(12, Double.NaN)), "half-life NaN ms");
    badCheckpoint(changed(good, b -> b.putInt(20, -1)), "local columns -1");
    badCheckpoint(changed(good, b -> b.putInt(20, ModelShare.MAX_COLUMNS + 1)), "local columns 32769");
    // 2^15 local columns pass the header's bound; the view then has none for local column 4
    badCheckpoint(changed(good, b -> b.putInt(20, ModelShare.MAX_COLUMNS)), "view has no column for local column 4");
    badCheckpoint(changed(good, b -> b.putLong(24, 0)), "next share 0");
    badCheckpoint(changed(good, b -> b.putInt(32, -1)), "sources -1");
    // the two folded sources: (0, 1) and (2, 1), each an int and a long
    badCheckpoint(changed(good, b -> b.putInt(36, -1)), "folded share 1 of partition -1");
    badCheckpoint(changed(good, b -> b.putInt(36, 1)), "folded share 1 of partition 1"); // its own
    badCheckpoint(changed(good, b -> b.putLong(40, 0)), "folded share 0 of partition 0");
    badCheckpoint(changed(good, b -> b.putInt(48, 0)), "folded share 1 of partition 0"); // twice
    badCheckpoint(changed(good, b -> b.putInt(60, -1)), "view has -1 columns");
    badCheckpoint(changed(good, b -> b.putInt(60, ModelShare.MAX_COLUMNS + 1)), "view has 32769 columns");
    // 2^15 view columns pass the count's bound (and the bytes after it are not such columns)
    IOException most = assertThrows(IOException.class, () -> read(changed(good, b -> b.putInt(60, ModelShare.MAX_COLUMNS))));
    assertTrue(!most.getMessage().contains("32768 columns"), most.getMessage());
    for (int cut = 0; cut < good.length; cut += 11) {
      badCheckpoint(java.util.Arrays.copyOf(good, cut), "global model checkpoint is truncated");
    }
  }

  @Test
  void aCheckpointWithAColumnOutOfRangeIsRefusedByName() throws IOException {
    GlobalModel g = twoSources();
    byte[] good = bytes(g);
    List<String> names = g.viewColumns();
    int price = names.indexOf("price");
    int p = column(names, price); // offset, scale, fixed, local index
    assertEquals(0.0, ByteBuffer.wrap(good).getDouble(p), 0.0);
    assertEquals(1.0, ByteBuffer.wrap(good).getDouble(p + 8), 0.0);
    assertEquals(1, ByteBuffer.wrap(good).getInt(p + 17));
    badCheckpoint(changed(good, b -> b.putDouble(p, Double.NaN)), "view column 1 (price, offset NaN");
    badCheckpoint(changed(good, b -> b.putDouble(p + 8, 0.0)), "view column 1 (price", "scale 0.0");
    badCheckpoint(changed(good, b -> b.putDouble(p + 8, -1.0)), "scale -1.0");
    badCheckpoint(changed(good, b -> b.putDouble(p + 8, Double.POSITIVE_INFINITY)), "scale Infinity");
    badCheckpoint(changed(good, b -> b.putInt(p + 17, 4)), "local index 4"); // 4 local columns: 0 to 3
    badCheckpoint(changed(good, b -> b.putInt(p + 17, -2)), "local index -2");
    badCheckpoint(changed(good, b -> b.putInt(p + 17, 0)), "local index 0"); // the constant's
    badCheckpoint(changed(good, b -> b.putInt(p + 17, -1)), "view has no column for local column 1");
    // a name given twice: site=b renamed site=a
    int siteB = column(names, names.indexOf("site=b"));
    byte[] twice = good.clone();
    twice[siteB - 1] = 'a';
    badCheckpoint(twice, "view column 3 (site=a");
    // a kept column (local index -1) and the largest local index are accepted: the good bytes;
    // the columns after a removed one moved down by one
    int siteA = column(names, names.indexOf("site=a"));
    int siteC = column(names, names.indexOf("site=c"));
    assertEquals(-1, ByteBuffer.wrap(good).getInt(siteA + 17));
    assertEquals(2, ByteBuffer.wrap(good).getInt(siteB + 17));
    assertEquals(3, ByteBuffer.wrap(good).getInt(siteC + 17));
  }

  @Test
  void anEmptyFreshModelOfPartitionZeroReadsBack() throws IOException {
    // partition 0, no columns, next share 1, no sources: the low ends of every header range
    GlobalModel g = new GlobalModel(0, new String[0], NO_CONSTANT, H);
    byte[] b = bytes(g);
    GlobalModel back = read(b);
    assertArrayEquals(b, bytes(back));
    assertEquals(0, back.localDimension());
    assertEquals(1L, back.nextShareSequence());
    assertTrue(back.foldedSequences().isEmpty());
    // and a model that folded from partition 0 a share numbered 1
    GlobalModel one = new GlobalModel(3, new String[] {"price"}, NO_CONSTANT, H);
    one.fold(share(0, 1, 0, new String[] {"price"}, new double[1], new double[] {1}, -1, new double[][] {{1}},
        new double[] {1}), 0);
    assertEquals(1L, read(bytes(one)).lastFolded(0));
  }
}
