package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.nist.Lre;
import dev.runnel.core.nist.NistDataset;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/**
 * NIST StRD linear least squares (data and certified values from the NIST StRD .dat files in
 * src/test/resources/nist-strd/), streamed through {@link RlsModel} with lambda = 1 and a diffuse
 * start, the predictors standardized online (Welford) with a re-base before every row, exactly as
 * the pipeline will. Accuracy is measured as LRE (digits), common practice in the StRD literature.
 */
class NistAccuracyTest {

  private static final List<String> REPORT = new ArrayList<>();

  /** Online standardization of one column; fires columnRebased whenever its encoding changes. */
  static final class Standardizer {
    final boolean centered;
    long n;
    double mean;
    double m2;
    double meanSquare;
    double m = 0.0; // encoding in use: z = (v - m) / s
    double s = 1.0;

    Standardizer(boolean centered) {
      this.centered = centered;
    }

    /** Welford's update (common practice); returns the encoded value under the new encoding. */
    double observe(double v, RlsModel model, int column) {
      n++;
      double d = v - mean;
      mean += d / n;
      m2 += d * (v - mean);
      meanSquare += (v * v - meanSquare) / n;
      double newM = centered ? mean : 0.0;
      // sample sd (denominator n - 1), Welford's usual output; RMS without a constant term
      double newS = centered ? (n > 1 ? Math.sqrt(m2 / (n - 1)) : 0.0) : Math.sqrt(meanSquare);
      if (!(newS > 0)) {
        newS = s;
      }
      if (newM != m || newS != s) {
        model.columnRebased(column, newS / s, (newM - m) / s);
        m = newM;
        s = newS;
      }
      return (v - m) / s;
    }
  }

  /** Results of one streamed fit in raw units. */
  record Fit(double[] beta, double[] se, double residualSd) { }

  static double[] predictors(NistDataset d, double[] row) {
    String name = d.name();
    if (name.equals("Longley")) {
      double[] x = new double[6];
      System.arraycopy(row, 1, x, 0, 6);
      return x;
    }
    int degree = name.equals("Pontius") ? 2 : name.startsWith("Wampler") ? 5 : name.equals("Filip") ? 10 : 1;
    double[] x = new double[degree];
    double v = row[1];
    double pow = 1.0;
    for (int k = 0; k < degree; k++) {
      pow *= v;
      x[k] = pow;
    }
    return x;
  }

  static Fit fit(NistDataset d, double priorVariance) {
    boolean intercept = d.hasIntercept();
    double[][] rows = d.rows();
    int q = predictors(d, rows[0]).length;
    int off = intercept ? 1 : 0;
    int p = q + off;
    ModelSettings settings = ModelSettings.defaults().withPriorVariance(priorVariance).withConstantTerm(intercept)
        .withWindupGuard(false);
    RlsModel model = new RlsModel(p, settings);
    Standardizer[] st = new Standardizer[q];
    for (int k = 0; k < q; k++) {
      st[k] = new Standardizer(intercept);
    }
    double[] x = new double[p];
    for (double[] row : rows) {
      double[] raw = predictors(d, row);
      if (intercept) {
        x[0] = 1.0;
      }
      for (int k = 0; k < q; k++) {
        x[k + off] = st[k].observe(raw[k], model, k + off);
      }
      assertTrue(model.update(x, row[0], 1.0), "update accepted");
    }
    assertTrue(model.ready(), d.name() + " full rank after all rows");
    double[] theta = new double[p];
    model.weights(theta);
    double[] c = model.unscaledCovariance();
    double s = model.residualSd();
    // raw beta = M theta: beta_k = theta_k / s_k, beta_0 = theta_0 - sum theta_k m_k / s_k
    double[][] mm = new double[p][p];
    if (intercept) {
      mm[0][0] = 1.0;
    }
    for (int k = 0; k < q; k++) {
      mm[k + off][k + off] = 1.0 / st[k].s;
      if (intercept) {
        mm[0][k + off] = -st[k].m / st[k].s;
      }
    }
    double[] beta = new double[p];
    double[] se = new double[p];
    for (int i = 0; i < p; i++) {
      double b = 0.0;
      for (int j = 0; j < p; j++) {
        b += mm[i][j] * theta[j];
      }
      beta[i] = b;
      double v = 0.0;
      for (int a = 0; a < p; a++) {
        for (int bb = 0; bb < p; bb++) {
          v += mm[i][a] * mm[i][bb] * c[a * p + bb];
        }
      }
      se[i] = s * Math.sqrt(v);
    }
    return new Fit(beta, se, s);
  }

  @ParameterizedTest(name = "{0}")
  @CsvSource({"Norris, 11", "Pontius, 11", "Longley, 11", "NoInt1, 13", "NoInt2, 13", "Wampler1, 8", "Wampler2, 11",
      "Wampler3, 8", "Wampler4, 8", "Wampler5, 6", "Filip, 7"})
  void streamedFitMatchesCertifiedCoefficients(String name, double requiredDigits) {
    NistDataset d = NistDataset.load(name); // NIST StRD certified values
    Fit f = fit(d, ModelSettings.DIFFUSE);
    int first = d.hasIntercept() ? 0 : 1;
    double minB = Lre.CAP;
    double minSd = Lre.CAP;
    for (int i = 0; i < f.beta.length; i++) {
      minB = Math.min(minB, Lre.of(f.beta[i], d.estimate(i + first)));
      minSd = Math.min(minSd, Lre.of(f.se[i], d.standardDeviation(i + first)));
    }
    double resSd = Lre.of(f.residualSd, d.residualSd());
    synchronized (REPORT) {
      REPORT.add(String.format(Locale.ROOT, "| %s | diffuse | %.1f | %.1f | %.1f | %.0f |", name, minB, minSd, resSd,
          requiredDigits));
    }
    assertTrue(minB >= requiredDigits, name + ": smallest coefficient LRE " + minB + " < " + requiredDigits);
    // standard deviations and residual sd: the same factor; required a little less (they need s too)
    assertTrue(minSd >= Math.min(requiredDigits, 6) && resSd >= Math.min(requiredDigits, 6),
        name + ": sd LRE " + minSd + ", residual sd LRE " + resSd);
  }

  /**
   * Longley with a weak prior (variance 1e12, not diffuse): the ridge biases the weights on
   * collinear data; measured for docs/model.md, and it must not beat the diffuse fit.
   */
  @ParameterizedTest(name = "prior {0}")
  @CsvSource({"1e12", "1e6"})
  void weakPriorOnLongleyCostsDigits(double priorVariance) {
    NistDataset d = NistDataset.load("Longley"); // NIST StRD certified values
    Fit withPrior = fit(d, priorVariance);
    Fit diffuse = fit(d, ModelSettings.DIFFUSE);
    double minPrior = Lre.CAP;
    double minDiffuse = Lre.CAP;
    for (int i = 0; i < 7; i++) {
      minPrior = Math.min(minPrior, Lre.of(withPrior.beta[i], d.estimate(i)));
      minDiffuse = Math.min(minDiffuse, Lre.of(diffuse.beta[i], d.estimate(i)));
    }
    synchronized (REPORT) {
      REPORT.add(String.format(Locale.ROOT, "| Longley | prior variance %s | %.1f | | | |", priorVariance, minPrior));
    }
    assertTrue(minPrior <= minDiffuse, "a prior cannot help on certified OLS values");
  }

  @AfterAll
  static void writeReport() throws IOException {
    List<String> lines = new ArrayList<>();
    lines.add("## The model alone, with a test-side standardizer; diffuse start against a weak prior");
    lines.add("");
    lines.add("Streamed one row at a time, lambda = 1, online standardization with exact re-basing, weights");
    lines.add("converted to raw units at the end. LRE = -log10(|e - c| / |c|), capped at 15 (common practice).");
    lines.add("Written by NistAccuracyTest.");
    lines.add("");
    lines.add("| dataset | prior | min LRE coefficients | min LRE std. dev. | LRE residual sd | required |");
    lines.add("|---|---|---|---|---|---|");
    synchronized (REPORT) {
      REPORT.sort(null);
      lines.addAll(REPORT);
    }
    Path out = Path.of("target", "accuracy-model.md");
    Files.createDirectories(out.getParent());
    Files.write(out, lines, StandardCharsets.UTF_8);
    dev.runnel.core.nist.AccuracyReport.section("model", String.join("\n", lines) + "\n");
  }
}
