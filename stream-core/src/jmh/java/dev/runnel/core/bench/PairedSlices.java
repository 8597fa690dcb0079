package dev.runnel.core.bench;

import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.Arrays;

/**
 * The measurement the paired A/B tools share ({@link ModelBuildsAB}, {@link PipelineBuildsAB},
 * {@link DecodeBuildsAB}, {@link FeaturizerBuildsAB}): two builds' workloads run in one JVM, warmed
 * up together, then timed in alternating slices of {@value #SLICE_CPU_NANOS} ns of this thread's
 * CPU time (A first in even slices, B first in odd ones), and each slice's B/A rate ratio kept. The
 * median of the paired ratios is far steadier on a shared machine than two separate runs.
 */
final class PairedSlices {

  /** Thread CPU time per build per slice. */
  static final long SLICE_CPU_NANOS = 500_000_000L;

  /** Sorted rates of A and B and sorted paired ratios B/A, one per slice. */
  record Result(double[] rateA, double[] rateB, double[] ratio) {
    int slices() { return ratio.length; }

    double medianA() { return rateA[slices() / 2]; }

    double medianB() { return rateB[slices() / 2]; }

    double medianRatio() { return ratio[slices() / 2]; }

    double lowerQuartileRatio() { return ratio[slices() / 4]; }

    double upperQuartileRatio() { return ratio[(3 * slices()) / 4]; }
  }

  private PairedSlices() { }

  /**
   * @param run the two workloads, A then B; each call does {@code unitsPerCall} units of work
   * @param unitsPerCall records (or lines, or updates) one call handles
   * @param warmups calls of each workload before timing
   * @param slices timed slices
   */
  static Result measure(Runnable[] run, int unitsPerCall, int warmups, int slices) {
    for (int w = 0; w < warmups; w++) {
      run[0].run();
      run[1].run();
    }
    ThreadMXBean threads = ManagementFactory.getThreadMXBean();
    double[][] rate = new double[2][slices];
    double[] ratio = new double[slices];
    for (int s = 0; s < slices; s++) {
      for (int k = 0; k < 2; k++) {
        int v = s % 2 == 0 ? k : 1 - k;
        long c0 = threads.getCurrentThreadCpuTime();
        long done = 0;
        while (threads.getCurrentThreadCpuTime() - c0 < SLICE_CPU_NANOS) {
          run[v].run();
          done += unitsPerCall;
        }
        rate[v][s] = done / ((threads.getCurrentThreadCpuTime() - c0) * 1e-9);
      }
      ratio[s] = rate[1][s] / rate[0][s];
    }
    Arrays.sort(rate[0]);
    Arrays.sort(rate[1]);
    Arrays.sort(ratio);
    return new Result(rate[0], rate[1], ratio);
  }
}
