package dev.runnel.core.pipeline;

import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * The "folded as soon as made" schedule of {@code model.scope: global} for several partitions' steps
 * run one record at a time on one thread (replays, backtests, benchmarks): before a step's record, the
 * shares the other partitions made since its last record are folded, in the order they were made;
 * after the record, a share is made when the step's period rule says so ({@link PipelineStep#shareIfDue},
 * {@code model.share_every_records}, {@code model.share_every}) and posted to every other partition.
 * Each share goes through its bytes ({@link ModelShare#toBytes}, {@link ModelShare#fromBytes}), as
 * through {@code <name>.shares} live. A share that reaches a step before its stream clock has a time
 * waits, with the ones after it ({@link PipelineStep#fold} returns null).
 *
 * <p>The live runner folds a share after the transaction that published it commits, so its folds
 * land later and at times that depend on commit timing; this schedule is the one without that delay.
 * With the same records in the same order it gives the same bits (docs/backtesting.md, "Global scope").
 *
 * <p>Partitions: those given to the constructor have an inbox from the start, so a partition whose
 * first record comes late still folds every share made before it. With the open constructor a
 * partition gets its inbox on its first {@link #before}, filled with every share made so far, which
 * this exchange then keeps for the whole run (memory grows with the shares made). One thread.
 */
public final class ShareExchange {

  /** Waiting shares (bytes) per partition number; null for a partition not known yet. */
  private ArrayDeque<byte[]>[] inbox;
  /** Open exchange: every share made so far with its source (for partitions that join late); else null. */
  private final List<byte[]> history;
  private final List<Integer> historySources;
  private final boolean fold;
  private long made;
  private long folded;
  /** Shares made and folded per partition number (grown with {@link #inbox}). */
  private long[] madeBy;
  private long[] foldedBy;

  /**
   * An exchange for these partitions (a partition not among them is refused).
   *
   * @param partitions the partition numbers, each ≥ 0. Not modified.
   * @throws IllegalArgumentException if a number is negative
   */
  public ShareExchange(int[] partitions) {
    this(partitions, true);
  }

  /**
   * An exchange that learns its partitions as their records come ({@link #before}); keeps every share.
   */
  public ShareExchange() {
    this.inbox = newInboxes(1);
    this.madeBy = new long[1];
    this.foldedBy = new long[1];
    this.history = new ArrayList<>();
    this.historySources = new ArrayList<>();
    this.fold = true;
  }

  /**
   * As {@link #ShareExchange(int[])}; with {@code fold} false shares are made but never folded (a
   * check: the steps then learn as with a model per partition).
   */
  public ShareExchange(int[] partitions, boolean fold) {
    int max = 0;
    for (int p : partitions) {
      if (p < 0) {
        throw new IllegalArgumentException("partition " + p + ": partition numbers are not negative");
      }
      max = Math.max(max, p);
    }
    this.inbox = newInboxes(max + 1);
    this.madeBy = new long[max + 1];
    this.foldedBy = new long[max + 1];
    for (int p : partitions) {
      inbox[p] = new ArrayDeque<>();
    }
    this.history = null;
    this.historySources = null;
    this.fold = fold;
  }

  @SuppressWarnings("unchecked")
  private static ArrayDeque<byte[]>[] newInboxes(int n) {
    return (ArrayDeque<byte[]>[]) new ArrayDeque[n];
  }

  /**
   * Before {@code step} (partition {@code partition}) runs a record: folds the waiting shares of the
   * other partitions, oldest first, until one must wait for the step's clock.
   *
   * @param partition the step's partition, ≥ 0
   * @param step the step ({@code model.scope: global}). Modified.
   * @throws IllegalArgumentException if the partition was not given to a closed exchange
   * @throws IllegalStateException if a share cannot be folded (its message says why)
   */
  public void before(int partition, PipelineStep step) {
    ArrayDeque<byte[]> waiting = inboxOf(partition);
    if (!fold) {
      waiting.clear();
      return;
    }
    while (!waiting.isEmpty()) {
      ModelShare s;
      try {
        s = ModelShare.fromBytes(waiting.peekFirst());
      } catch (IOException e) {
        throw new UncheckedIOException(e); // made by this exchange from a share: a defect
      }
      GlobalModel.FoldResult r;
      try {
        r = step.fold(s);
      } catch (IllegalArgumentException e) {
        throw new IllegalStateException("partition " + partition + " could not fold share " + s.sequence()
            + " of partition " + s.source() + ": " + e.getMessage(), e);
      }
      if (r == null) {
        return; // no clock yet: this one and the rest wait, in order
      }
      if (r != GlobalModel.FoldResult.FOLDED) {
        throw new IllegalStateException("partition " + partition + " had folded share " + s.sequence()
            + " of partition " + s.source() + " already (each share goes to each partition once)");
      }
      waiting.pollFirst();
      folded++;
      foldedBy[partition]++;
    }
  }

  /**
   * After {@code step} (partition {@code partition}) ran a record: makes its share when one is due
   * and posts it to every other partition.
   *
   * @param partition the step's partition
   * @param step the step. Modified.
   * @return the share made, or null
   */
  public ModelShare after(int partition, PipelineStep step) {
    ModelShare s = step.shareIfDue();
    if (s != null) {
      post(partition, s.toBytes());
    }
    return s;
  }

  /** Posts a share's bytes, made by {@code source}, to every other partition. */
  private void post(int source, byte[] bytes) {
    made++;
    madeBy[source]++;
    for (int q = 0; q < inbox.length; q++) {
      if (q != source && inbox[q] != null) {
        inbox[q].addLast(bytes);
      }
    }
    if (history != null) {
      history.add(bytes);
      historySources.add(source);
    }
  }

  private ArrayDeque<byte[]> inboxOf(int p) {
    if (p >= 0 && p < inbox.length && inbox[p] != null) {
      return inbox[p];
    }
    if (history == null || p < 0) {
      throw new IllegalArgumentException("partition " + p + " is not one this exchange was made for");
    }
    if (p >= inbox.length) {
      inbox = Arrays.copyOf(inbox, Math.max(p + 1, inbox.length * 2));
      madeBy = Arrays.copyOf(madeBy, inbox.length);
      foldedBy = Arrays.copyOf(foldedBy, inbox.length);
    }
    ArrayDeque<byte[]> box = new ArrayDeque<>();
    for (int i = 0; i < history.size(); i++) {
      if (historySources.get(i) != p) {
        box.addLast(history.get(i));
      }
    }
    inbox[p] = box;
    return box;
  }

  /** Shares made so far (posted by {@link #after}). */
  public long sharesMade() { return made; }

  /** Shares folded so far, over all partitions. */
  public long sharesFolded() { return folded; }

  /** Shares partition {@code p} made so far; 0 for a partition this exchange has not met. */
  public long sharesMadeBy(int p) {
    return p >= 0 && p < madeBy.length ? madeBy[p] : 0;
  }

  /** Shares partition {@code p} folded so far (made by the others); 0 for a partition this exchange has not met. */
  public long sharesFoldedBy(int p) {
    return p >= 0 && p < foldedBy.length ? foldedBy[p] : 0;
  }

  /** Shares waiting to be folded, over all partitions. */
  public long sharesWaiting() {
    long n = 0;
    for (ArrayDeque<byte[]> b : inbox) {
      if (b != null) {
        n += b.size();
      }
    }
    return n;
  }
}
