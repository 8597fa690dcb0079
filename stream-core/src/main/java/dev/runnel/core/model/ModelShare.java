package dev.runnel.core.model;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.HashSet;
import java.util.Set;
import java.util.zip.CRC32;

/**
 * What one partition's own records contributed to the model since its previous share, made by
 * {@link GlobalModel#share} and folded in by the other partitions' {@link GlobalModel#fold}.
 * Immutable.
 *
 * <p>Content: the increment of the information in square-root form, an upper-triangular
 * {@code S} (in the share's own column order) and a vector {@code u} with {@code S^T S = dLambda}
 * (the increment of the information matrix, in units of 1/noise variance) and
 * {@code S^T u = d eta} (the increment of the information-weighted target vector); the rows'
 * own weighted residual sum of squares and their effective sample size (the sum of their
 * weights); every column's name and the basis its entries are in (the entry of a value {@code v}
 * is {@code (v - offset) / scale}); and the event time at which the rows' weights are stated (the
 * sender's clock when it shared). {@link #information()} and {@link #informationVector()} give
 * {@code dLambda} and {@code d eta} themselves; the factor is carried instead because its
 * conditioning is the square root of theirs and because folding it in is a rotation of its rows.
 *
 * <p>Binary form ({@link #toBytes()}, {@link #fromBytes(byte[])}): the magic {@code RNS1}, the
 * format version, the body's length in bytes, the body, and the CRC-32 of the body. A share that
 * is cut short, longer than it says, fails its checksum or holds an out-of-range value is
 * refused with an {@link IOException} saying which. Details: {@code docs/model.md}, "One model
 * across partitions".
 */
public final class ModelShare {

  /** Format version written by {@link #toBytes()}. */
  public static final int FORMAT_VERSION = 1;
  private static final int MAGIC = 0x524e5331; // "RNS1"
  /** Most columns a share may have (the model's own limit on a checkpoint's dimension). */
  static final int MAX_COLUMNS = 1 << 15;

  private final int source;
  private final long sequence;
  private final long eventTimeMillis;
  private final String[] names;
  private final double[] offsets;
  private final double[] scales;
  private final boolean[] fixed;
  private final int constant;
  private final double[][] rows;
  private final double[] targets;
  private final double residualSumOfSquares;
  private final double sampleSize;

  /**
   * @param source the partition that made the share, at least 0
   * @param sequence its number among that partition's shares, from 1
   * @param eventTimeMillis the event time at which the rows' weights are stated
   * @param names the columns' names, unique, non-empty. Not modified (copied).
   * @param offsets per column, the {@code offset} of its basis. Not modified (copied).
   * @param scales per column, the {@code scale} of its basis, positive. Not modified (copied).
   * @param fixed per column, whether it is never re-based (a one-hot level). Not modified (copied).
   * @param constant the position of the constant term, or -1 when the model has none
   * @param rows the upper-triangular factor {@code S}, {@code p x p}; entries below the diagonal
   *     are ignored. Not modified (copied).
   * @param targets {@code u}. Not modified (copied).
   * @param residualSumOfSquares the rows' own minimum weighted residual sum of squares, >= 0
   * @param sampleSize the rows' effective sample size, >= 0
   * @throws IllegalArgumentException naming the first value out of range
   */
  public ModelShare(int source, long sequence, long eventTimeMillis, String[] names, double[] offsets,
      double[] scales, boolean[] fixed, int constant, double[][] rows, double[] targets,
      double residualSumOfSquares, double sampleSize) {
    int p = names.length;
    require(source >= 0, "source partition", source);
    require(sequence >= 1, "sequence", sequence);
    require(p <= MAX_COLUMNS, "column count", p);
    require(offsets.length == p && scales.length == p && fixed.length == p && targets.length == p
        && rows.length == p, "array lengths for columns", p);
    require(constant >= -1 && constant < p, "constant position", constant);
    require(residualSumOfSquares >= 0 && residualSumOfSquares < Double.POSITIVE_INFINITY,
        "residual sum of squares", residualSumOfSquares);
    require(sampleSize >= 0 && sampleSize < Double.POSITIVE_INFINITY, "sample size", sampleSize);
    Set<String> seen = new HashSet<>();
    this.names = names.clone();
    this.offsets = offsets.clone();
    this.scales = scales.clone();
    this.fixed = fixed.clone();
    this.targets = targets.clone();
    this.rows = new double[p][p];
    // each check's message is built only when it fails (building them all cost most of a share's
    // construction, which runs once per share made and once per share read)
    for (int i = 0; i < p; i++) {
      require(names[i] != null && !names[i].isEmpty() && seen.add(names[i]), "column name", names[i]);
      if (!Double.isFinite(offsets[i])) {
        require(false, "offset of column " + names[i], offsets[i]);
      }
      if (!(scales[i] > 0 && scales[i] < Double.POSITIVE_INFINITY)) {
        require(false, "scale of column " + names[i], scales[i]);
      }
      if (!Double.isFinite(targets[i])) {
        require(false, "target of row " + i, targets[i]);
      }
      if (rows[i].length < p) {
        require(false, "length of row " + i, rows[i].length);
      }
      final double[] from = rows[i];
      final double[] to = this.rows[i];
      for (int j = i; j < p; j++) {
        if (!Double.isFinite(from[j])) {
          require(false, "factor entry (" + i + ", " + j + ")", from[j]);
        }
        to[j] = from[j];
      }
    }
    this.source = source;
    this.sequence = sequence;
    this.eventTimeMillis = eventTimeMillis;
    this.constant = constant;
    this.residualSumOfSquares = residualSumOfSquares;
    this.sampleSize = sampleSize;
  }

  /**
   * The bytes written, as {@link ByteArrayOutputStream} without its locks (a {@code writeDouble}
   * is one locked write each there; this class is used by one thread).
   */
  private static final class Sink extends java.io.OutputStream {
    private byte[] buf;
    private int count;

    Sink(int capacity) {
      buf = new byte[Math.max(16, capacity)];
    }

    private void ensure(int more) {
      if (count + more > buf.length) {
        buf = java.util.Arrays.copyOf(buf, Math.max(count + more, 2 * buf.length));
      }
    }

    @Override
    public void write(int b) {
      ensure(1);
      buf[count++] = (byte) b;
    }

    @Override
    public void write(byte[] b, int off, int len) {
      ensure(len);
      System.arraycopy(b, off, buf, count, len);
      count += len;
    }

    /** As {@link DataOutputStream#writeDouble} (big-endian bits), without a call per byte block. */
    void writeDouble(double v) {
      ensure(8);
      long b = Double.doubleToLongBits(v);
      for (int k = 56; k >= 0; k -= 8) {
        buf[count++] = (byte) (b >>> k);
      }
    }

    byte[] toByteArray() {
      return java.util.Arrays.copyOf(buf, count);
    }
  }

  /** A range of bytes read, as {@link ByteArrayInputStream} without its locks. */
  private static final class Source extends java.io.InputStream {
    private final byte[] buf;
    private int pos;
    private final int end;

    Source(byte[] buf, int offset, int length) {
      this.buf = buf;
      this.pos = offset;
      this.end = offset + length;
    }

    @Override
    public int read() {
      return pos < end ? buf[pos++] & 0xff : -1;
    }

    @Override
    public int read(byte[] b, int off, int len) {
      if (len == 0) {
        return 0;
      }
      if (pos >= end) {
        return -1;
      }
      int n = Math.min(len, end - pos);
      System.arraycopy(buf, pos, b, off, n);
      pos += n;
      return n;
    }

    @Override
    public int available() {
      return end - pos;
    }

    /** As {@link DataInputStream#readDouble}. */
    double readDouble() throws EOFException {
      if (end - pos < 8) {
        pos = end;
        throw new EOFException();
      }
      long b = 0;
      for (int k = 0; k < 8; k++) {
        b = (b << 8) | (buf[pos++] & 0xff);
      }
      return Double.longBitsToDouble(b);
    }
  }

  private static void require(boolean ok, String what, Object value) {
    if (!ok) {
      throw new IllegalArgumentException("model share: " + what + " " + value + " is out of range");
    }
  }

  /** @return the partition that made the share */
  public int source() { return source; }

  /** @return its number among that partition's shares, from 1 */
  public long sequence() { return sequence; }

  /** @return the event time (ms) at which the rows' weights are stated */
  public long eventTimeMillis() { return eventTimeMillis; }

  /** @return the number of columns */
  public int dimension() { return names.length; }

  /** @param q a position @return the column's name */
  public String name(int q) { return names[q]; }

  /** @param q a position @return the offset of the column's basis */
  public double offset(int q) { return offsets[q]; }

  /** @param q a position @return the scale of the column's basis */
  public double scale(int q) { return scales[q]; }

  /** @param q a position @return whether the column is never re-based */
  public boolean fixed(int q) { return fixed[q]; }

  /** @return the constant term's position, or -1 */
  public int constant() { return constant; }

  /** @param i a row @param j a column at or after {@code i} @return the factor entry */
  public double factor(int i, int j) { return j < i ? 0.0 : rows[i][j]; }

  /** @param i a row @return {@code u_i} */
  public double target(int i) { return targets[i]; }

  /** @return the rows' own minimum weighted residual sum of squares */
  public double residualSumOfSquares() { return residualSumOfSquares; }

  /** @return the rows' effective sample size (the sum of their weights) */
  public double sampleSize() { return sampleSize; }

  /**
   * @return {@code dLambda = S^T S}, row-major {@code p x p} in the share's column order (a new
   *     array)
   */
  public double[] information() {
    int p = names.length;
    double[] out = new double[p * p];
    for (int i = 0; i < p; i++) {
      for (int j = 0; j < p; j++) {
        double s = 0.0;
        for (int k = 0; k <= Math.min(i, j); k++) {
          s += rows[k][i] * rows[k][j];
        }
        out[i * p + j] = s;
      }
    }
    return out;
  }

  /** @return {@code d eta = S^T u} in the share's column order (a new array) */
  public double[] informationVector() {
    int p = names.length;
    double[] out = new double[p];
    for (int j = 0; j < p; j++) {
      double s = 0.0;
      for (int k = 0; k <= j; k++) {
        s += rows[k][j] * targets[k];
      }
      out[j] = s;
    }
    return out;
  }

  // ---------------------------------------------------------------- binary form

  /** @return the binary form: magic, version, body length, body, CRC-32 of the body */
  public byte[] toBytes() {
    try {
      int p = names.length;
      Sink body = new Sink(64 + 40 * p + 8 * (p * (p + 1) / 2 + p));
      DataOutputStream out = new DataOutputStream(body);
      out.writeInt(source);
      out.writeLong(sequence);
      out.writeLong(eventTimeMillis);
      out.writeInt(p);
      out.writeInt(constant);
      for (int q = 0; q < p; q++) {
        out.writeUTF(names[q]);
        out.writeDouble(offsets[q]);
        out.writeDouble(scales[q]);
        out.writeBoolean(fixed[q]);
      }
      // the triangle straight into the sink (the data stream has no buffer of its own, so the
      // bytes are in the same order)
      for (int i = 0; i < p; i++) {
        final double[] row = rows[i];
        for (int j = i; j < p; j++) {
          body.writeDouble(row[j]);
        }
        body.writeDouble(targets[i]);
      }
      out.writeDouble(residualSumOfSquares);
      out.writeDouble(sampleSize);
      out.flush();
      byte[] b = body.toByteArray();
      CRC32 crc = new CRC32();
      crc.update(b);
      ByteArrayOutputStream all = new ByteArrayOutputStream(b.length + 16);
      DataOutputStream o = new DataOutputStream(all);
      o.writeInt(MAGIC);
      o.writeInt(FORMAT_VERSION);
      o.writeInt(b.length);
      o.write(b);
      o.writeInt((int) crc.getValue());
      o.flush();
      return all.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e); // in-memory streams do not fail
    }
  }

  /**
   * Reads a share written by {@link #toBytes()}.
   *
   * @param bytes the binary form. Not modified.
   * @return the share
   * @throws IOException if the bytes are not a share of a known version, are cut short
   *     ("model share is truncated"), are longer than the share they hold, fail the checksum
   *     ("tampered or corrupted"), or hold a value out of range (named)
   */
  public static ModelShare fromBytes(byte[] bytes) throws IOException {
    if (bytes.length < 12) {
      throw new EOFException("model share is truncated: " + bytes.length + " bytes, the header alone is 12");
    }
    DataInputStream head = new DataInputStream(new ByteArrayInputStream(bytes, 0, 12));
    int magic = head.readInt();
    if (magic != MAGIC) {
      throw new IOException("not a model share: magic 0x" + Integer.toHexString(magic));
    }
    int version = head.readInt();
    if (version != FORMAT_VERSION) {
      throw new IOException("model share format version " + version + " is not supported (this build reads "
          + FORMAT_VERSION + ")");
    }
    int length = head.readInt();
    if (length < 0) {
      throw new IOException("corrupt model share: body length " + length);
    }
    long expected = 12L + length + 4L;
    if (bytes.length < expected) {
      throw new EOFException("model share is truncated: " + bytes.length + " bytes, its header says " + expected);
    }
    if (bytes.length > expected) {
      throw new IOException("model share has " + (bytes.length - expected) + " bytes after its end ("
          + expected + " expected)");
    }
    CRC32 crc = new CRC32();
    crc.update(bytes, 12, length);
    int stored = ((bytes[12 + length] & 0xff) << 24) | ((bytes[13 + length] & 0xff) << 16)
        | ((bytes[14 + length] & 0xff) << 8) | (bytes[15 + length] & 0xff);
    if (stored != (int) crc.getValue()) {
      throw new IOException("model share fails its checksum (tampered or corrupted): CRC-32 0x"
          + Integer.toHexString((int) crc.getValue()) + ", stored 0x" + Integer.toHexString(stored));
    }
    Source src = new Source(bytes, 12, length);
    DataInputStream in = new DataInputStream(src); // no buffer of its own: src.readDouble follows it
    try {
      int source = in.readInt();
      long sequence = in.readLong();
      long time = in.readLong();
      int p = in.readInt();
      if (p < 0 || p > MAX_COLUMNS || (long) p * (p + 1) / 2 * 8 > length) {
        throw new IOException("corrupt model share: " + p + " columns in a body of " + length + " bytes");
      }
      int constant = in.readInt();
      String[] names = new String[p];
      double[] offsets = new double[p];
      double[] scales = new double[p];
      boolean[] fixed = new boolean[p];
      for (int q = 0; q < p; q++) {
        names[q] = in.readUTF();
        offsets[q] = in.readDouble();
        scales[q] = in.readDouble();
        fixed[q] = in.readBoolean();
      }
      double[][] rows = new double[p][p];
      double[] targets = new double[p];
      for (int i = 0; i < p; i++) {
        final double[] row = rows[i];
        for (int j = i; j < p; j++) {
          row[j] = src.readDouble();
        }
        targets[i] = src.readDouble();
      }
      double rss = in.readDouble();
      double n = in.readDouble();
      if (in.available() != 0) {
        throw new IOException("corrupt model share: " + in.available() + " bytes left in the body after the share");
      }
      return new ModelShare(source, sequence, time, names, offsets, scales, fixed, constant, rows, targets, rss, n);
    } catch (EOFException e) {
      throw new EOFException("model share is truncated: its body ends before the share does");
    } catch (IllegalArgumentException e) {
      throw new IOException("corrupt " + e.getMessage(), e);
    }
  }
}
