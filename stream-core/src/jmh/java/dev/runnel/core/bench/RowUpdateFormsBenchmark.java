package dev.runnel.core.bench;

import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Where the time of the triangular row update goes at small p: the kernel of
 * {@link dev.runnel.core.model.RlsModel#update} stripped to its rotations (no forgetting, guard,
 * checks or bookkeeping), next to variants that each remove one suspected cost. Dense rows as in
 * {@link RlsKernelBenchmark}; each variant has its own factor, started from {@code 0.1 I}.
 * <ul>
 *   <li>{@code givens}: the shipped form. Row {@code i}: {@code h = sqrt(r_ii^2 + w_i^2)},
 *       {@code c = r_ii / h}, {@code s = w_i / h}, then {@code r_ij <- c r_ij + s w_j},
 *       {@code w_j <- c w_j - s r_ij} over {@code j > i} into a spare row. Each row's square root
 *       and divisions wait for the previous row's result.</li>
 *   <li>{@code scaled}: the same factor by a square-root-free chain. The data vector is carried
 *       unscaled, {@code w_j <- w_j - t r_ij} with {@code t = w_i / r_ii} (a forward substitution);
 *       its scale enters through {@code u <- u + t^2}, and {@code c = sqrt(u / u')},
 *       {@code s gamma = t / sqrt(u u')} no longer feed the next row. Agrees with {@code givens}
 *       to about 1e-14 relative (checked while it was written, not here).</li>
 *   <li>{@code noChain}: {@code scaled} with {@code t} a constant: no row waits for another.</li>
 *   <li>{@code givensTwoRows}: {@code givens} with two rows rotated in one pass over the columns:
 *       half the loops and half the loads and stores of the data vector.</li>
 *   <li>{@code givensInPlace}: {@code givens} writing the factor in place: half the memory.</li>
 *   <li>{@code givensFullRows}: {@code givens} over whole rows, {@code j} from 0: twice the element
 *       work, every loop the same length ({@code p}).</li>
 * </ul>
 * {@code noChain} and {@code givensFullRows} do not compute a least-squares factor; they exist to
 * be timed. Run by {@link RowUpdateForms}, which writes the table in {@code docs/bench/}.
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar 'RowUpdateFormsBenchmark|AxpyBenchmark'
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(1)
public class RowUpdateFormsBenchmark {

  @Param({"64", "128"})
  public int p;

  private static final int N = 1024;
  private double[][] rows;
  private double[] ys;
  private double[][] r;
  private double[][] s;
  private double[] z;
  private double[] zn;
  private double[] w;
  private int k;

  @Setup(Level.Trial)
  public void setup() {
    ys = new double[N];
    rows = BenchData.denseRows(p, N, 7, ys);
    r = new double[p][p];
    s = new double[p][p];
    z = new double[p];
    zn = new double[p];
    w = new double[p];
    for (int i = 0; i < p; i++) {
      r[i][i] = 0.1;
    }
  }

  private double[] next() {
    final double[] x = rows[k & (N - 1)];
    System.arraycopy(x, 0, w, 0, p);
    k++;
    return x;
  }

  private void swap() {
    final double[][] t = r;
    r = s;
    s = t;
    final double[] tz = z;
    z = zn;
    zn = tz;
  }

  @Benchmark
  public double givens() {
    return givensPass(false, false);
  }

  @Benchmark
  public double givensInPlace() {
    return givensPass(true, false);
  }

  @Benchmark
  public double givensFullRows() {
    return givensPass(false, true);
  }

  /** One pass of the shipped form; {@code inPlace} writes {@code r}, {@code fullRows} runs j from 0. */
  private double givensPass(boolean inPlace, boolean fullRows) {
    next();
    final int n = p;
    final double[] w = this.w;
    final double[][] rm = r;
    final double[][] rs = inPlace ? r : s;
    final double[] zm = z;
    final double[] zz = inPlace ? z : zn;
    double yw = ys[(k - 1) & (N - 1)];
    double g = 1.0;
    double q = 0.0;
    for (int i = 0; i < n; i++) {
      final double[] a = rm[i];
      final double[] b = rs[i];
      final double xi = w[i];
      final double zi = zm[i];
      final double ai = a[i];
      final double h = Math.sqrt(ai * ai + xi * xi);
      final double cs = ai / h;
      final double sn = xi / h;
      q += g * (sn * sn);
      g *= cs * cs;
      zz[i] = cs * zi + sn * yw;
      yw = cs * yw - sn * zi;
      rotate(a, b, w, fullRows ? 0 : i + 1, n, cs, sn);
      b[i] = h;
    }
    if (!inPlace) {
      swap();
    }
    return q / g + yw;
  }

  private static void rotate(double[] a, double[] b, double[] w, int from, int to, double cs, double sn) {
    for (int j = from; j < to; j++) {
      final double aj = a[j];
      final double wj = w[j];
      b[j] = cs * aj + sn * wj;
      w[j] = cs * wj - sn * aj;
    }
  }

  @Benchmark
  public double givensTwoRows() {
    next();
    final int n = p;
    final double[] w = this.w;
    final double[][] rm = r;
    final double[][] rs = s;
    final double[] zm = z;
    final double[] zz = zn;
    double yw = ys[(k - 1) & (N - 1)];
    double g = 1.0;
    double q = 0.0;
    int i = 0;
    for (; i + 1 < n; i += 2) {
      final double[] a = rm[i];
      final double[] b = rs[i];
      final double[] a2 = rm[i + 1];
      final double[] b2 = rs[i + 1];
      final double xi = w[i];
      final double ai = a[i];
      final double h = Math.sqrt(ai * ai + xi * xi);
      final double cs = ai / h;
      final double sn = xi / h;
      q += g * (sn * sn);
      g *= cs * cs;
      b[i] = h;
      zz[i] = cs * zm[i] + sn * yw;
      yw = cs * yw - sn * zm[i];
      final double a1 = a[i + 1];
      final double w1 = w[i + 1];
      b[i + 1] = cs * a1 + sn * w1;
      final double x2 = cs * w1 - sn * a1; // the next row's entry, rotated by this row
      final double ai2 = a2[i + 1];
      final double h2 = Math.sqrt(ai2 * ai2 + x2 * x2);
      final double cs2 = ai2 / h2;
      final double sn2 = x2 / h2;
      q += g * (sn2 * sn2);
      g *= cs2 * cs2;
      b2[i + 1] = h2;
      zz[i + 1] = cs2 * zm[i + 1] + sn2 * yw;
      yw = cs2 * yw - sn2 * zm[i + 1];
      for (int j = i + 2; j < n; j++) {
        final double aj = a[j];
        final double wj = w[j];
        b[j] = cs * aj + sn * wj;
        final double wm = cs * wj - sn * aj;
        final double a2j = a2[j];
        b2[j] = cs2 * a2j + sn2 * wm;
        w[j] = cs2 * wm - sn2 * a2j;
      }
    }
    for (; i < n; i++) { // the last row when p is odd: only its pivot
      final double ai = rm[i][i];
      final double xi = w[i];
      final double h = Math.sqrt(ai * ai + xi * xi);
      rs[i][i] = h;
      zz[i] = zm[i];
    }
    swap();
    return q / g + yw;
  }

  @Benchmark
  public double scaled() {
    return scaledPass(false);
  }

  @Benchmark
  public double noChain() {
    return scaledPass(true);
  }

  private double scaledPass(boolean constantT) {
    next();
    final int n = p;
    final double[] w = this.w;
    final double[][] rm = r;
    final double[][] rs = s;
    final double[] zm = z;
    final double[] zz = zn;
    double yh = ys[(k - 1) & (N - 1)];
    double u = 1.0;
    double sum = 0.0;
    for (int i = 0; i < n; i++) {
      final double[] a = rm[i];
      final double[] b = rs[i];
      final double zi = zm[i];
      final double ai = a[i];
      final double t = (constantT ? 1e-3 : w[i]) * (1.0 / ai);
      final double u1 = u + t * t;
      sum += t * t;
      final double m = 1.0 / Math.sqrt(u * u1);
      final double c = u * m;
      final double sg = t * m;
      b[i] = ai * u1 * m;
      zz[i] = c * zi + sg * yh;
      yh -= t * zi;
      for (int j = i + 1; j < n; j++) {
        final double aj = a[j];
        final double wj = w[j];
        b[j] = c * aj + sg * wj;
        w[j] = wj - t * aj;
      }
      u = u1;
    }
    swap();
    return sum + yh;
  }
}
