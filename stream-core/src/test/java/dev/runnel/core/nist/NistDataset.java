package dev.runnel.core.nist;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * One NIST StRD dataset (Statistical Reference Datasets, https://www.itl.nist.gov/div898/strd/) as
 * kept in {@code src/test/resources/nist-strd/}: header lines {@code # key: value}, certified
 * values {@code # certified <name> <values...>}, then whitespace-separated data rows.
 */
public final class NistDataset {

  private final String name;
  private final Map<String, String> header;
  private final Map<String, double[]> certified;
  private final double[][] rows;

  private NistDataset(String name, Map<String, String> header, Map<String, double[]> certified, double[][] rows) {
    this.name = name;
    this.header = header;
    this.certified = certified;
    this.rows = rows;
  }

  /**
   * @param name file name without {@code .dat}, e.g. {@code Longley}
   * @return the parsed dataset
   */
  public static NistDataset load(String name) {
    String path = "/nist-strd/" + name + ".dat";
    try (InputStream in = NistDataset.class.getResourceAsStream(path)) {
      if (in == null) {
        throw new IllegalArgumentException("no test resource " + path);
      }
      BufferedReader br = new BufferedReader(new InputStreamReader(in, StandardCharsets.US_ASCII));
      Map<String, String> header = new LinkedHashMap<>();
      Map<String, double[]> cert = new LinkedHashMap<>();
      List<double[]> data = new ArrayList<>();
      String line;
      while ((line = br.readLine()) != null) {
        String t = line.trim();
        if (t.isEmpty()) {
          continue;
        }
        if (t.startsWith("#")) {
          String body = t.substring(1).trim();
          if (body.startsWith("certified ")) {
            String[] f = body.split("\\s+");
            double[] v = new double[f.length - 2];
            for (int i = 2; i < f.length; i++) {
              v[i - 2] = Double.parseDouble(f[i]);
            }
            cert.put(f[1], v);
          } else {
            int c = body.indexOf(':');
            if (c > 0) {
              header.put(body.substring(0, c).trim(), body.substring(c + 1).trim());
            }
          }
          continue;
        }
        String[] f = t.split("\\s+");
        double[] v = new double[f.length];
        for (int i = 0; i < f.length; i++) {
          v[i] = Double.parseDouble(f[i]);
        }
        data.add(v);
      }
      return new NistDataset(name, header, cert, data.toArray(new double[0][]));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** @return the dataset's name */
  public String name() {
    return name;
  }

  /** @param key header key, e.g. {@code model} @return its value or null */
  public String header(String key) {
    return header.get(key);
  }

  /** @return the data rows, columns as in the {@code columns} header (y first) */
  public double[][] rows() {
    return rows;
  }

  /** @return the number of certified parameters B0.. or B1.. */
  public int parameterCount() {
    int n = 0;
    for (String k : certified.keySet()) {
      if (k.matches("B\\d+")) {
        n++;
      }
    }
    return n;
  }

  /** @return whether the model has B0 (a constant term) */
  public boolean hasIntercept() {
    return certified.containsKey("B0");
  }

  /** @param k parameter index as NIST numbers it @return the certified estimate of Bk */
  public double estimate(int k) {
    return value("B" + k)[0];
  }

  /** @param k parameter index @return the certified standard deviation of Bk */
  public double standardDeviation(int k) {
    return value("B" + k)[1];
  }

  /** @return the certified residual standard deviation */
  public double residualSd() {
    return value("residual_sd")[0];
  }

  private double[] value(String key) {
    double[] v = certified.get(key);
    if (v == null) {
      throw new IllegalArgumentException(name + " has no certified " + key);
    }
    return v;
  }
}
