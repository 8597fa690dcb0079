package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.Test;

/**
 * Running mean and sd against the certified values of the NIST StRD univariate summary statistics
 * datasets (files in src/test/resources/nist-strd/, copied with their headers from the shared
 * reference folder). Accuracy is measured as LRE = -log10(|x - c| / |c|), capped at 15 (common
 * practice in the StRD accuracy literature, e.g. McCullough 1998 -- cited from memory).
 */
class NistUnivariateTest {

  private static final Map<String, double[]> RESULTS = new LinkedHashMap<>();

  static final class Dataset {
    final List<Double> values = new ArrayList<>();
    double certifiedMean = Double.NaN;
    double certifiedSd = Double.NaN;
  }

  static Dataset read(String name) throws IOException {
    Dataset d = new Dataset();
    try (InputStream in = NistUnivariateTest.class.getResourceAsStream("/nist-strd/" + name + ".dat")) {
      if (in == null) throw new IOException("missing resource nist-strd/" + name + ".dat");
      BufferedReader r = new BufferedReader(new InputStreamReader(in, StandardCharsets.UTF_8));
      String line;
      while ((line = r.readLine()) != null) {
        String t = line.trim();
        if (t.isEmpty()) continue;
        if (t.startsWith("#")) {
          if (t.startsWith("# certified mean ")) d.certifiedMean = Double.parseDouble(t.substring(17).trim());
          if (t.startsWith("# certified sd ")) d.certifiedSd = Double.parseDouble(t.substring(15).trim());
          continue;
        }
        for (String tok : t.split("\\s+")) d.values.add(Double.parseDouble(tok));
      }
    }
    return d;
  }

  static double lre(double x, double c) {
    if (x == c) return 15.0;
    double v = -Math.log10(Math.abs(x - c) / Math.abs(c));
    return Math.min(15.0, Math.max(0.0, v));
  }

  private static double[] run(String name) throws IOException {
    Dataset d = read(name);
    assertTrue(d.values.size() > 2 && !Double.isNaN(d.certifiedMean) && !Double.isNaN(d.certifiedSd), name + " parsed");
    RunningScaler s = new RunningScaler();
    for (double v : d.values) s.observe(v);
    assertEquals(d.values.size(), s.count());
    double[] lres = {lre(s.mean(), d.certifiedMean), lre(s.sd(), d.certifiedSd), d.values.size()};
    RESULTS.put(name, lres);
    return lres;
  }

  // NIST StRD NumAcc1-4, certified values: mean LRE >= 13; sd LRE >= 9 (NumAcc1-3) and >= 8 (NumAcc4).
  @Test void numAcc1_meanAndSdReachCertifiedDigits() throws IOException {
    double[] l = run("NumAcc1");
    assertTrue(l[0] >= 13, "mean LRE " + l[0]);
    assertTrue(l[1] >= 9, "sd LRE " + l[1]);
  }

  @Test void numAcc2_meanAndSdReachCertifiedDigits() throws IOException {
    double[] l = run("NumAcc2");
    assertTrue(l[0] >= 13, "mean LRE " + l[0]);
    assertTrue(l[1] >= 9, "sd LRE " + l[1]);
  }

  @Test void numAcc3_meanAndSdReachCertifiedDigits() throws IOException {
    double[] l = run("NumAcc3");
    assertTrue(l[0] >= 13, "mean LRE " + l[0]);
    assertTrue(l[1] >= 9, "sd LRE " + l[1]);
  }

  @Test void numAcc4_meanAndSdReachCertifiedDigits() throws IOException {
    double[] l = run("NumAcc4");
    assertTrue(l[0] >= 13, "mean LRE " + l[0]);
    assertTrue(l[1] >= 8, "sd LRE " + l[1]);
  }

  // NIST StRD PiDigits, Lottery, Lew, Mavro, Michelso, certified values. Floor measured on this
  // implementation (lowest: Mavro sd 13.1; see target/univariate-lre.md): every one reached at least
  // FLOOR digits for both mean and sd.
  private static final double OTHER_FLOOR = 13.0;

  @Test void otherUnivariateSets_reachMeasuredFloor() throws IOException {
    for (String name : List.of("PiDigits", "Lottery", "Lew", "Mavro", "Michelso")) {
      double[] l = run(name);
      assertTrue(l[0] >= OTHER_FLOOR, name + " mean LRE " + l[0]);
      assertTrue(l[1] >= OTHER_FLOOR, name + " sd LRE " + l[1]);
    }
  }

  @AfterAll static void writeTable() throws IOException {
    StringBuilder sb = new StringBuilder();
    sb.append("## Running mean and sd against NIST StRD univariate certified values\n\n");
    sb.append("LRE = -log10(|x - c| / |c|), capped at 15. Welford update relative to the first value (RunningScaler).\n\n");
    sb.append("| dataset | n | mean LRE | sd LRE |\n|---|---|---|---|\n");
    for (Map.Entry<String, double[]> e : RESULTS.entrySet()) {
      sb.append(String.format(java.util.Locale.ROOT, "| %s | %d | %.2f | %.2f |%n", e.getKey(), (long) e.getValue()[2], e.getValue()[0], e.getValue()[1]));
    }
    Path out = Path.of("target", "univariate-lre.md");
    Files.createDirectories(out.getParent());
    Files.writeString(out, sb.toString(), StandardCharsets.UTF_8);
    dev.runnel.core.nist.AccuracyReport.section("univariate", sb.toString()
        + "\nWritten by `NistUnivariateTest`. Required: mean ≥ 13 on every NumAcc set; sd ≥ 9 on NumAcc1–3 and ≥ 8 on\n"
        + "NumAcc4 (about 8.3 is the limit of double precision for NumAcc4's decimal inputs). Source: NIST StRD,\n"
        + "Univariate Summary Statistics, certified values from the data files' headers.\n");
  }
}
