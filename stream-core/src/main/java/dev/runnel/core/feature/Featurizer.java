package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import dev.runnel.core.layout.LayoutListener;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.EOFException;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * Turns decoded records into rows of the model, keeping the versioned column layout. One writer
 * thread.
 *
 * <p>Layout: column 0 is {@code constant} (always 1) when {@code model.constant_term}; then, in
 * the order of the {@code features} list, each feature's fixed columns (a one-hot's
 * {@code <name>=(other)}, a cyclic feature's {@code <name>.sin1, <name>.cos1, ...}, a numeric
 * feature's {@code <name>}, a polynomial's {@code <name>^1 ... <name>^d}); then the one-hot levels'
 * columns {@code <name>=<level>} in order of admission. Fixed columns never move; a level column
 * is appended on admission and removed on expiry (later columns shift down by one). A cross of
 * features A and B has a cell column {@code <a column>*<b column>} for each pair of their columns;
 * cells of a level are added right after the level's column and removed right after it.
 *
 * <p>Training ({@link #learnAndEncode}) changes state in this order, reporting each change to the
 * listener as it is made: (1) sightings of admitted levels are recorded, then expired levels are
 * removed ({@code columnRemoved}); (2) new levels are admitted ({@code columnAdded}); (3) every
 * scaler takes the record's value and re-bases its column if its centre or scale moved
 * ({@code columnRebased}); (4) the row is encoded with the new state. Scoring ({@link #encode})
 * reads state only; a level that is not admitted encodes as "other".
 *
 * <p>Allocation: once warm and with a stable layout, the training and scoring paths allocate
 * nothing (a level is looked up by the chars of the record's text, without a {@code String};
 * admission creates one entry and its key).
 */
public final class Featurizer {

  /** Checkpoint format written by {@link #writeTo}. */
  public static final int FORMAT_VERSION = 1;

  /** One column of the layout. */
  static final class Column {
    int index;
    final String name;
    final RunningScaler scaler;

    Column(String name, RunningScaler scaler) {
      this.name = name;
      this.scaler = scaler;
    }
  }

  /**
   * Snapshot of one vocabulary (cold path).
   *
   * @param levels admitted levels from least to most recently seen
   * @param otherColumn index of the feature's "(other)" column
   * @param otherCount training records that went to "other"
   */
  public record VocabularySnapshot(String feature, String field, int otherColumn, long otherCount,
                                   List<LevelSnapshot> levels, int candidates) {
    /** Copies the list. */
    public VocabularySnapshot { levels = List.copyOf(levels); }
  }

  /** Snapshot of one admitted level. */
  public record LevelSnapshot(String level, int column, long count, long firstSeenMillis, long lastSeenMillis, long lastSeenRecord) { }

  /**
   * Snapshot of one scaled column (cold path).
   *
   * @param centre m in use; @param scale s in use
   */
  public record ScalerSnapshot(String column, int index, String scaling, String transform, long count, double weightSum,
                               double mean, double sd, double centre, double scale) { }

  private final PipelineConfig config;
  private final RecordSchema schema;
  private final boolean constantTerm;
  private final Feature[] features;
  /**
   * The features by kind, each in the order of {@link #features}: the per-record loops call
   * only the features that have work in that phase, and each call site sees one class (or two),
   * so the calls are direct. Writes go kind by kind with the crosses last: a feature writes only
   * its own columns, and a cross reads those of its parts, which come before it.
   */
  private final OneHot[] oneHots;
  private final Feature[] scaled;
  private final Cyclic[] cyclics;
  private final Numeric[] numerics;
  private final Polynomial[] polynomials;
  private final Cross[] crosses;
  /** The slots every feature reads, which a record must hold (see {@link #plainlyValid}). */
  private final int[] requiredSlots;
  private final int maxDimension;
  private final int targetSlot;
  private final int eventTimeSlot;
  private Column[] columns;
  private int dimension;
  private long layoutVersion;
  private LayoutListener listener = LayoutListener.NONE;
  private long trainingRecords;
  private long streamTimeMillis = Long.MIN_VALUE;
  private String detail = "";

  /** Builds the featurizer for {@code config} with the schema it declares. */
  public Featurizer(PipelineConfig config) { this(config, config.input().schema()); }

  /**
   * @param config a checked configuration. Not modified.
   * @param schema the schema of the records to featurize; must equal the configuration's
   * @throws IllegalArgumentException if the schema differs from the configuration's, or a feature
   *     kind is not available (cross)
   */
  public Featurizer(PipelineConfig config, RecordSchema schema) {
    if (!schema.equals(config.input().schema())) {
      throw new IllegalArgumentException("schema " + schema + " differs from the configuration's " + config.input().schema());
    }
    this.config = config;
    this.schema = schema;
    this.constantTerm = config.model().constantTerm();
    this.targetSlot = schema.slot(config.target());
    this.eventTimeSlot = config.input().eventTime().map(e -> schema.slot(e.field())).orElse(-1);
    List<FeatureConfig> fcs = config.features();
    features = new Feature[fcs.size()];
    long max = constantTerm ? 1 : 0;
    for (int i = 0; i < features.length; i++) {
      FeatureConfig fc = fcs.get(i);
      Feature f;
      if (fc instanceof FeatureConfig.OneHot o) f = new OneHot(o, schema);
      else if (fc instanceof FeatureConfig.Cyclic c) f = new Cyclic(c, schema, config);
      else if (fc instanceof FeatureConfig.Numeric n) f = new Numeric(n, schema);
      else if (fc instanceof FeatureConfig.Polynomial p) f = new Polynomial(p, schema);
      else if (fc instanceof FeatureConfig.Cross x) f = new Cross(x, find(features, i, x.of().get(0)), find(features, i, x.of().get(1)));
      else throw new IllegalArgumentException("features[" + i + "]: kind " + fc.kind() + " is not available in this version");
      features[i] = f;
      max += f.maxColumns();
    }
    oneHots = Arrays.stream(features).filter(f -> f instanceof OneHot).toArray(OneHot[]::new);
    scaled = Arrays.stream(features).filter(f -> f instanceof Numeric || f instanceof Polynomial).toArray(Feature[]::new);
    cyclics = Arrays.stream(features).filter(f -> f instanceof Cyclic).toArray(Cyclic[]::new);
    numerics = Arrays.stream(features).filter(f -> f instanceof Numeric).toArray(Numeric[]::new);
    polynomials = Arrays.stream(features).filter(f -> f instanceof Polynomial).toArray(Polynomial[]::new);
    crosses = Arrays.stream(features).filter(f -> f instanceof Cross).toArray(Cross[]::new);
    requiredSlots = Arrays.stream(features).mapToInt(Featurizer::requiredSlot).filter(s -> s >= 0).toArray();
    if (max > Integer.MAX_VALUE - 8) throw new IllegalArgumentException("the layout could grow to " + max + " columns; lower max_levels");
    maxDimension = (int) max;
    columns = new Column[Math.min(maxDimension, 64)];
    if (constantTerm) append(new Column("constant", null));
    for (Feature f : features) f.createFixedColumns(this);
    layoutVersion = 0;
  }

  /** The slot a feature requires to be present, or -1 when it requires none. */
  private static int requiredSlot(Feature f) {
    if (f instanceof OneHot o) return o.slot;
    if (f instanceof Cyclic c) return c.slot;
    if (f instanceof Numeric n) return n.slot;
    if (f instanceof Polynomial p) return p.slot;
    return -1;
  }

  private static Feature find(Feature[] built, int before, String name) {
    for (int k = 0; k < before; k++) {
      if (built[k].name.equals(name)) {
        if (!(built[k] instanceof OneHot) && !(built[k] instanceof Cyclic)) {
          throw new IllegalArgumentException("a cross takes onehot or cyclic features; " + name + " is " + built[k].kind());
        }
        return built[k];
      }
    }
    throw new IllegalArgumentException("a cross must name features declared before it; " + name + " is not one");
  }

  // ---------------------------------------------------------------- layout

  /** Current number of columns. */
  public int dimension() { return dimension; }

  /** Upper bound of {@link #dimension()} for any input: size output arrays with it. */
  public int maxDimension() { return maxDimension; }

  /** Incremented on every column added or removed (not on re-basing). 0 after construction. */
  public long layoutVersion() { return layoutVersion; }

  /** Name of column {@code column}, e.g. {@code hub=H07}. */
  public String columnName(int column) { return col(column).name; }

  /** Names of all columns in order (a copy; cold path). */
  public List<String> columnNames() {
    List<String> out = new ArrayList<>(dimension);
    for (int i = 0; i < dimension; i++) out.add(columns[i].name);
    return out;
  }

  /** Whether column 0 is the constant term. */
  public boolean hasConstantTerm() { return constantTerm; }

  /** The centre {@code m} of a scaled column; 0 for other columns. */
  public double centre(int column) {
    Column c = col(column);
    return c.scaler == null ? 0.0 : c.scaler.centre();
  }

  /** The scale {@code s} of a scaled column; 1 for other columns. */
  public double scale(int column) {
    Column c = col(column);
    return c.scaler == null ? 1.0 : c.scaler.scale();
  }

  /** Sets who hears about layout changes; {@code null} means {@link LayoutListener#NONE}. */
  public void setListener(LayoutListener listener) { this.listener = listener == null ? LayoutListener.NONE : listener; }

  /** Training records seen by {@link #learnAndEncode}. */
  public long trainingRecords() { return trainingRecords; }

  /** Largest event time passed to {@link #learnAndEncode}; {@code Long.MIN_VALUE} before any. */
  public long streamTimeMillis() { return streamTimeMillis; }

  /** The configuration this featurizer was built from. */
  public PipelineConfig config() { return config; }

  private Column col(int column) {
    if (column < 0 || column >= dimension) {
      throw new IndexOutOfBoundsException("column " + column + " is outside 0.." + (dimension - 1));
    }
    return columns[column];
  }

  Column addColumn(String name, RunningScaler scaler) {
    Column c = append(new Column(name, scaler));
    layoutVersion++;
    listener.columnAdded(c.index, name, scaler == null); // only scaled columns are ever re-based
    return c;
  }

  private Column append(Column c) {
    if (dimension == columns.length) columns = Arrays.copyOf(columns, Math.min(maxDimension, Math.max(8, dimension * 2)));
    c.index = dimension;
    columns[dimension++] = c;
    return c;
  }

  void removeColumn(Column c) {
    int at = c.index;
    for (int i = at + 1; i < dimension; i++) {
      Column m = columns[i];
      m.index = i - 1;
      columns[i - 1] = m;
    }
    columns[--dimension] = null;
    c.index = -1;
    layoutVersion++;
    listener.columnRemoved(at);
  }

  void rebase(Column c) {
    RunningScaler s = c.scaler;
    listener.columnRebased(c.index, s.lastScale(), constantTerm ? s.lastShift() : 0.0);
  }

  // ---------------------------------------------------------------- records

  /** The detail of the last non-null {@link #check}, e.g. {@code field price: missing}. */
  public String lastDetail() { return detail; }

  /** {@link #check(EventRecord, boolean)} without requiring the target. */
  public RejectReason check(EventRecord r) { return check(r, false); }

  /**
   * Checks that every input the features need is present and valid: the event-time field when
   * one is configured, each feature's field, each transform's domain; and the target when
   * {@code requireTarget}. Reads state only.
   *
   * @param r a decoded record. Not modified.
   * @return null when the record can be featurized, else the reason ({@link #lastDetail()} says more)
   */
  public RejectReason check(EventRecord r, boolean requireTarget) {
    detail = "";
    if (eventTimeSlot >= 0 && !r.hasEventTime()) {
      detail = "field " + schema.name(eventTimeSlot) + " (the event time): missing";
      return RejectReason.MISSING_FIELD;
    }
    if (!plainlyValid(r)) {
      for (Feature f : features) {
        RejectReason why = f.check(r, this);
        if (why != null) return why;
      }
    }
    if (requireTarget) {
      if (!r.present(targetSlot)) {
        detail = "field " + config.target() + " (the target): missing";
        return RejectReason.MISSING_FIELD;
      }
      if (!Double.isFinite(r.number(targetSlot))) {
        detail = "field " + config.target() + " (the target): not finite";
        return RejectReason.NOT_FINITE;
      }
    }
    return null;
  }

  /**
   * Whether every feature's check passes, tested without calling each feature: every field a
   * feature reads is present, each numeric value is in its transform's domain, each polynomial's
   * highest power is finite. When false, the features' own checks in order find the first problem
   * and its detail.
   */
  private boolean plainlyValid(EventRecord r) {
    int[] slots = requiredSlots;
    for (int i = 0; i < slots.length; i++) {
      if (!r.present(slots[i])) return false;
    }
    Numeric[] ns = numerics;
    for (int i = 0; i < ns.length; i++) {
      if (!ns[i].scaler.accepts(r.number(ns[i].slot))) return false;
    }
    Polynomial[] ps = polynomials;
    for (int i = 0; i < ps.length; i++) {
      if (ps[i].check(r, this) != null) return false;
    }
    return true;
  }

  /** Whether the record holds the target (a training record). */
  public boolean hasTarget(EventRecord r) { return r.present(targetSlot); }

  /** The record's target value; meaningful when {@link #hasTarget}. */
  public double target(EventRecord r) { return r.number(targetSlot); }

  void setDetail(String d) { detail = d; }

  /**
   * Training path: learns from the record, reporting layout changes, then encodes it.
   * The caller must have had {@code null} from {@link #check(EventRecord)} for this record.
   *
   * @param r a checked record. Not modified.
   * @param eventTimeMillis the record's event time (from the record or the transport)
   * @param out receives the row in {@code out[0 .. dimension())} with the layout after this call;
   *     length at least {@link #maxDimension()} is always enough. Modified.
   */
  public void learnAndEncode(EventRecord r, long eventTimeMillis, double[] out) {
    trainingRecords++;
    if (eventTimeMillis > streamTimeMillis) streamTimeMillis = eventTimeMillis;
    OneHot[] hs = oneHots;
    for (int i = 0; i < hs.length; i++) hs[i].touchAndExpire(r, eventTimeMillis, this);
    for (int i = 0; i < hs.length; i++) hs[i].admit(r, eventTimeMillis, this);
    Feature[] fs = scaled;
    for (int i = 0; i < fs.length; i++) fs[i].learnScalers(r, this);
    write(r, eventTimeMillis, out, true);
  }

  /**
   * Scoring path: encodes the record with the current state and changes nothing. Levels that are
   * not admitted encode as "other".
   *
   * @param r a checked record. Not modified.
   * @param out receives the row in {@code out[0 .. dimension())}. Modified.
   */
  public void encode(EventRecord r, long eventTimeMillis, double[] out) {
    write(r, eventTimeMillis, out, false);
  }

  private void write(EventRecord r, long t, double[] out, boolean training) {
    int n = dimension;
    for (int i = 0; i < n; i++) out[i] = 0.0;
    if (constantTerm) out[0] = 1.0;
    OneHot[] hs = oneHots;
    for (int i = 0; i < hs.length; i++) hs[i].write(r, t, out, training);
    Cyclic[] cs = cyclics;
    for (int i = 0; i < cs.length; i++) cs[i].write(r, t, out, training);
    Numeric[] ns = numerics;
    for (int i = 0; i < ns.length; i++) ns[i].write(r, t, out, training);
    Polynomial[] ps = polynomials;
    for (int i = 0; i < ps.length; i++) ps[i].write(r, t, out, training);
    Cross[] xs = crosses;
    for (int i = 0; i < xs.length; i++) xs[i].write(r, t, out, training);
  }

  // ---------------------------------------------------------------- snapshots

  /** The vocabularies of all one-hot features (a copy; cold path). */
  public List<VocabularySnapshot> vocabularies() {
    List<VocabularySnapshot> out = new ArrayList<>();
    for (Feature f : features) {
      if (f instanceof OneHot o) {
        List<LevelSnapshot> ls = new ArrayList<>();
        for (RollingVocabulary.Level l : o.vocabulary.levelsInOrder()) {
          ls.add(new LevelSnapshot(l.key, l.column.index, l.count, l.firstSeenMillis, l.lastSeenMillis, l.lastSeenRecord));
        }
        out.add(new VocabularySnapshot(o.name, o.cfg.field(), o.other.index, o.vocabulary.otherCount(), ls,
            o.vocabulary.candidateCount()));
      }
    }
    return out;
  }

  /** The state of every scaled column, in column order (a copy; cold path). */
  public List<ScalerSnapshot> scalers() {
    List<ScalerSnapshot> out = new ArrayList<>();
    for (int i = 0; i < dimension; i++) {
      RunningScaler s = columns[i].scaler;
      if (s != null) {
        out.add(new ScalerSnapshot(columns[i].name, i, s.scaling().word(), s.transform().word(), s.count(), s.weightSum(),
            s.mean(), s.sd(), s.centre(), s.scale()));
      }
    }
    return out;
  }

  /** The vocabulary of one-hot feature {@code featureName}, or null (for tests and tools). */
  public RollingVocabulary vocabulary(String featureName) {
    for (Feature f : features) if (f instanceof OneHot o && o.name.equals(featureName)) return o.vocabulary;
    return null;
  }

  // ---------------------------------------------------------------- checkpoint

  /**
   * Writes the whole state: counters, vocabularies, scalers and the column order. Restoring it
   * with {@link #readFrom} into a fresh featurizer of the same configuration continues with the
   * same rows and layout events, bit for bit.
   * @param out receives the state. Modified.
   * @throws IOException from {@code out}
   */
  public void writeTo(DataOutput out) throws IOException {
    out.writeInt(FORMAT_VERSION);
    out.writeInt(features.length);
    for (Feature f : features) {
      RollingVocabulary.writeString(out, f.name);
      RollingVocabulary.writeString(out, f.kind());
    }
    out.writeBoolean(constantTerm);
    out.writeLong(trainingRecords);
    out.writeLong(streamTimeMillis);
    out.writeLong(layoutVersion);
    for (Feature f : features) f.writeState(out);
    int first = firstDynamicColumn();
    java.util.IdentityHashMap<Column, int[]> owners = new java.util.IdentityHashMap<>();
    java.util.IdentityHashMap<Column, String> levelKeys = new java.util.IdentityHashMap<>();
    java.util.IdentityHashMap<Column, Column[]> cellParts = new java.util.IdentityHashMap<>();
    for (int k = 0; k < features.length; k++) {
      if (features[k] instanceof OneHot o) {
        owners.put(o.other, new int[] {k, PART_OTHER});
        for (RollingVocabulary.Level l : o.vocabulary.levelsInOrder()) {
          owners.put(l.column, new int[] {k, PART_LEVEL});
          levelKeys.put(l.column, l.key);
        }
      } else if (features[k] instanceof Cyclic c) {
        for (int j = 0; j < c.cols.length; j++) owners.put(c.cols[j], new int[] {k, PART_CYCLIC, j});
      } else if (features[k] instanceof Cross x) {
        x.collectCells(k, owners, cellParts);
      }
    }
    out.writeInt(dimension - first);
    for (int i = first; i < dimension; i++) {
      Column c = columns[i];
      int[] owner = owners.get(c);
      if (owner == null || owner[1] == PART_OTHER || owner[1] == PART_CYCLIC) {
        throw new IllegalStateException("column " + i + " (" + c.name + ") is not a dynamic column");
      }
      out.writeInt(owner[0]);
      if (owner[1] == PART_LEVEL) {
        RollingVocabulary.writeString(out, levelKeys.get(c));
      } else {
        Column[] parts = cellParts.get(c);
        writePart(out, owners.get(parts[0]), levelKeys.get(parts[0]));
        writePart(out, owners.get(parts[1]), levelKeys.get(parts[1]));
      }
    }
    out.writeInt(dimension);
  }

  private static final int PART_OTHER = 0;
  private static final int PART_LEVEL = 1;
  private static final int PART_CYCLIC = 2;
  private static final int PART_CELL = 3;

  private static void writePart(DataOutput out, int[] owner, String levelKey) throws IOException {
    out.writeInt(owner[0]);
    out.writeByte(owner[1]);
    if (owner[1] == PART_LEVEL) RollingVocabulary.writeString(out, levelKey);
    if (owner[1] == PART_CYCLIC) out.writeInt(owner[2]);
  }

  private Column readPart(DataInput in) throws IOException {
    int k = in.readInt();
    int kind = in.readByte();
    if (k < 0 || k >= features.length) throw new IOException("corrupt checkpoint: part owner " + k);
    Feature f = features[k];
    if (kind == PART_OTHER && f instanceof OneHot o) return o.other;
    if (kind == PART_LEVEL && f instanceof OneHot o) {
      RollingVocabulary.Level l = o.vocabulary.find(RollingVocabulary.readString(in));
      if (l == null || l.column == null) throw new IOException("corrupt checkpoint: unknown level of " + o.name);
      return l.column;
    }
    if (kind == PART_CYCLIC && f instanceof Cyclic c) {
      int j = in.readInt();
      if (j < 0 || j >= c.cols.length) throw new IOException("corrupt checkpoint: cyclic part " + j);
      return c.cols[j];
    }
    throw new IOException("corrupt checkpoint: part kind " + kind + " of " + f.name);
  }

  private int firstDynamicColumn() {
    int n = constantTerm ? 1 : 0;
    for (Feature f : features) n += f.fixedColumns();
    return n;
  }

  /**
   * Restores state written by {@link #writeTo}. Reports no layout events: the model restores its
   * own columns from its own checkpoint.
   *
   * @param in the state. Modified (read).
   * @throws IOException on a truncated or inconsistent checkpoint
   * @throws IllegalStateException if this featurizer has already seen records
   * @throws IllegalArgumentException if the checkpoint comes from a different configuration or format
   */
  public void readFrom(DataInput in) throws IOException {
    if (trainingRecords != 0 || dimension != firstDynamicColumn()) {
      throw new IllegalStateException("readFrom needs a fresh featurizer; this one has seen " + trainingRecords + " records");
    }
    try {
      read(in);
    } catch (EOFException e) {
      throw new EOFException("feature checkpoint is truncated");
    }
  }

  private void read(DataInput in) throws IOException {
    int version = in.readInt();
    if (version != FORMAT_VERSION) {
      throw new IllegalArgumentException("checkpoint format " + version + " is not supported; this build reads format " + FORMAT_VERSION);
    }
    int n = in.readInt();
    if (n != features.length) throw new IllegalArgumentException("checkpoint has " + n + " features, the configuration " + features.length);
    for (Feature f : features) {
      String name = RollingVocabulary.readString(in);
      String kind = RollingVocabulary.readString(in);
      if (!name.equals(f.name) || !kind.equals(f.kind())) {
        throw new IllegalArgumentException("checkpoint feature " + kind + " " + name + " does not match the configuration's " + f.kind() + " " + f.name);
      }
    }
    if (in.readBoolean() != constantTerm) throw new IllegalArgumentException("checkpoint differs in model.constant_term");
    trainingRecords = in.readLong();
    streamTimeMillis = in.readLong();
    long version2 = in.readLong();
    for (Feature f : features) f.readState(in);
    int dynamic = in.readInt();
    if (dynamic < 0 || dynamic > maxDimension) throw new IOException("corrupt checkpoint: " + dynamic + " level columns");
    for (int i = 0; i < dynamic; i++) {
      int owner = in.readInt();
      if (owner < 0 || owner >= features.length) throw new IOException("corrupt checkpoint: column owner " + owner);
      if (features[owner] instanceof OneHot o) {
        String key = RollingVocabulary.readString(in);
        RollingVocabulary.Level l = o.vocabulary.find(key);
        if (l == null || l.column != null) throw new IOException("corrupt checkpoint: level " + key + " of " + o.name);
        l.column = append(new Column(o.levelColumnName(key), null));
        o.parts.add(l.column);
      } else if (features[owner] instanceof Cross x) {
        Column a = readPart(in);
        Column b = readPart(in);
        x.restoreCell(a, b, this);
      } else {
        throw new IOException("corrupt checkpoint: column owner " + owner + " has no dynamic columns");
      }
    }
    int dim = in.readInt();
    if (dim != dimension) throw new IOException("corrupt checkpoint: dimension " + dim + ", rebuilt " + dimension);
    for (Feature f : features) {
      if (f instanceof OneHot o) {
        for (RollingVocabulary.Level l : o.vocabulary.levelsInOrder()) {
          if (l.column == null) throw new IOException("corrupt checkpoint: level " + l.key + " of " + o.name + " has no column");
        }
      }
    }
    layoutVersion = version2;
  }

  // ---------------------------------------------------------------- features

  /** One feature function. */
  private abstract static class Feature {
    final String name;

    Feature(String name) { this.name = name; }

    abstract String kind();

    abstract int maxColumns();

    abstract int fixedColumns();

    abstract void createFixedColumns(Featurizer f);

    abstract RejectReason check(EventRecord r, Featurizer f);

    void touchAndExpire(EventRecord r, long t, Featurizer f) { }

    void admit(EventRecord r, long t, Featurizer f) { }

    void learnScalers(EventRecord r, Featurizer f) { }

    abstract void write(EventRecord r, long t, double[] out, boolean training);

    void writeState(DataOutput out) throws IOException { }

    void readState(DataInput in) throws IOException { }
  }

  private static RejectReason missing(Featurizer f, RecordSchema s, int slot) {
    f.setDetail("field " + s.name(slot) + ": missing");
    return RejectReason.MISSING_FIELD;
  }

  private static final class OneHot extends Feature {
    final FeatureConfig.OneHot cfg;
    final int slot;
    final boolean flag;
    final RollingVocabulary vocabulary;
    Column other;
    /** The "(other)" column, then the level columns in layout order: the parts a cross multiplies. */
    final ArrayList<Column> parts = new ArrayList<>();
    final ArrayList<Cross> dependents = new ArrayList<>();
    /** The column set to 1 by the last write. */
    Column written;
    private RollingVocabulary.Level current;

    OneHot(FeatureConfig.OneHot cfg, RecordSchema s) {
      super(cfg.name());
      this.cfg = cfg;
      this.slot = s.slot(cfg.field());
      this.flag = s.type(slot) == FieldType.FLAG;
      this.vocabulary = new RollingVocabulary(cfg.maxLevels(), cfg.minCount(), cfg.expireAfterMillis(), cfg.expireAfterRecords());
    }

    @Override String kind() { return cfg.kind(); }
    @Override int maxColumns() { return cfg.maxLevels() + 1; }
    @Override int fixedColumns() { return 1; }

    @Override void createFixedColumns(Featurizer f) {
      other = f.append(new Column(name + "=(other)", null));
      parts.add(other);
    }

    String levelColumnName(String key) { return name + "=" + key; }

    private static final char[] TRUE = {'t', 'r', 'u', 'e'};
    private static final char[] FALSE = {'f', 'a', 'l', 's', 'e'};

    /** The chars of the record's level: the text buffer, or "true"/"false" for a flag. */
    private char[] keyChars(EventRecord r) {
      if (flag) return r.flag(slot) ? TRUE : FALSE;
      return r.textChars(slot);
    }

    private int keyLength(EventRecord r) {
      if (flag) return r.flag(slot) ? 4 : 5;
      return r.textLength(slot);
    }

    @Override RejectReason check(EventRecord r, Featurizer f) {
      return r.present(slot) ? null : missing(f, f.schema, slot);
    }

    @Override void touchAndExpire(EventRecord r, long t, Featurizer f) {
      current = vocabulary.touch(keyChars(r), 0, keyLength(r), t, f.trainingRecords);
      RollingVocabulary.Level gone;
      while ((gone = vocabulary.expireOne(f.streamTimeMillis, f.trainingRecords, current)) != null) {
        Column c = gone.column;
        gone.column = null;
        f.removeColumn(c);
        parts.remove(c);
        for (int i = 0; i < dependents.size(); i++) dependents.get(i).partRemoved(this, c, f);
      }
    }

    @Override void admit(EventRecord r, long t, Featurizer f) {
      if (current != null) return;
      RollingVocabulary.Level l = vocabulary.sight(keyChars(r), 0, keyLength(r), t, f.trainingRecords);
      if (l != null) {
        l.column = f.addColumn(levelColumnName(l.key), null);
        current = l;
        parts.add(l.column);
        for (int i = 0; i < dependents.size(); i++) dependents.get(i).partAdded(this, l.column, f);
      }
    }

    @Override void write(EventRecord r, long t, double[] out, boolean training) {
      RollingVocabulary.Level l = training ? current : vocabulary.find(keyChars(r), 0, keyLength(r));
      written = l != null ? l.column : other;
      out[written.index] = 1.0;
      if (training) current = null;
    }

    @Override void writeState(DataOutput out) throws IOException { vocabulary.writeTo(out); }

    @Override void readState(DataInput in) throws IOException { vocabulary.readFrom(in); }
  }

  private static final class Cyclic extends Feature {
    final FeatureConfig.Cyclic cfg;
    final int slot;
    final LocalCalendar calendar;
    final Column[] cols;

    Cyclic(FeatureConfig.Cyclic cfg, RecordSchema s, PipelineConfig pc) {
      super(cfg.name());
      this.cfg = cfg;
      this.slot = cfg.field() == null ? -1 : s.slot(cfg.field());
      this.calendar = new LocalCalendar(pc.input().timeZone());
      this.cols = new Column[2 * cfg.harmonics()];
      this.memo = new double[MEMO * cols.length];
    }

    @Override String kind() { return cfg.kind(); }
    @Override int maxColumns() { return cols.length; }
    @Override int fixedColumns() { return cols.length; }

    @Override void createFixedColumns(Featurizer f) {
      for (int k = 1; k <= cfg.harmonics(); k++) {
        cols[2 * k - 2] = f.append(new Column(name + ".sin" + k, null));
        cols[2 * k - 1] = f.append(new Column(name + ".cos" + k, null));
      }
    }

    @Override RejectReason check(EventRecord r, Featurizer f) {
      return slot < 0 || r.present(slot) ? null : missing(f, f.schema, slot);
    }

    /** Position in the cycle as a fraction of the period, in [0, 1). */
    double phase(long t) {
      switch (cfg.cycle()) {
        case HOUR_OF_DAY: return calendar.dayFraction(t);
        case DAY_OF_WEEK: return (calendar.isoDayOfWeek(t) - 1) / 7.0;
        case DAY_OF_YEAR: default: return (calendar.dayOfYear(t) - 1) / (double) calendar.daysInYear(t);
      }
    }

    /**
     * Remembered encodings: slot {@code e} holds the angle {@code memoAngle[e]} (its bits; valid
     * when {@code memoFilled[e]}) and its sines and cosines {@code memo[e * cols.length ..]}, in
     * column order. A stream has few distinct positions in a cycle (24 hours of hourly data, 7
     * days), so most records find theirs here instead of computing {@code cols.length} sines and
     * cosines; the values are those the same computation gave, so the row is the same bit for bit.
     * Direct-mapped by the angle's bits, {@value #MEMO} slots.
     */
    private static final int MEMO = 64;
    private final long[] memoAngle = new long[MEMO];
    private final boolean[] memoFilled = new boolean[MEMO];
    private final double[] memo;

    @Override void write(EventRecord r, long t, double[] out, boolean training) {
      long time = slot < 0 ? t : r.timeMillis(slot);
      double base = 2.0 * Math.PI * phase(time);
      long bits = Double.doubleToRawLongBits(base);
      int e = (int) ((bits * 0x9E3779B97F4A7C15L) >>> 58);
      int w = cols.length;
      double[] m = memo;
      if (!memoFilled[e] || memoAngle[e] != bits) {
        for (int k = 1; k <= w / 2; k++) {
          double a = base * k;
          m[e * w + 2 * k - 2] = Math.sin(a);
          m[e * w + 2 * k - 1] = Math.cos(a);
        }
        memoAngle[e] = bits;
        memoFilled[e] = true;
      }
      Column[] c = cols;
      for (int j = 0; j < w; j++) out[c[j].index] = m[e * w + j];
    }
  }

  private static final class Numeric extends Feature {
    final FeatureConfig.Numeric cfg;
    final int slot;
    final RunningScaler scaler;
    Column column;
    private double value;

    Numeric(FeatureConfig.Numeric cfg, RecordSchema s) {
      super(cfg.name());
      this.cfg = cfg;
      this.slot = s.slot(cfg.field());
      this.scaler = new RunningScaler(cfg.scaling(), cfg.transform(), cfg.exponent(), cfg.weightingHalfLifeRecords(), cfg.clip());
    }

    @Override String kind() { return cfg.kind(); }
    @Override int maxColumns() { return 1; }
    @Override int fixedColumns() { return 1; }

    @Override void createFixedColumns(Featurizer f) {
      column = f.append(new Column(name, cfg.scaling() == Scaling.NONE ? null : scaler));
    }

    @Override RejectReason check(EventRecord r, Featurizer f) {
      if (!r.present(slot)) return missing(f, f.schema, slot);
      double v = r.number(slot);
      if (!scaler.accepts(v)) {
        f.setDetail("field " + cfg.field() + ": " + v + " is outside the transform's domain (" + scaler.domain() + ")");
        return RejectReason.OUT_OF_RANGE;
      }
      return null;
    }

    @Override void learnScalers(EventRecord r, Featurizer f) {
      value = scaler.transformed(r.number(slot));
      if (scaler.observe(value) && column.scaler != null) f.rebase(column);
    }

    @Override void write(EventRecord r, long t, double[] out, boolean training) {
      double v = training ? value : scaler.transformed(r.number(slot));
      out[column.index] = scaler.encode(v);
    }

    @Override void writeState(DataOutput out) throws IOException { scaler.writeTo(out); }

    @Override void readState(DataInput in) throws IOException { scaler.readFrom(in); }
  }

  private static final class Polynomial extends Feature {
    final FeatureConfig.Polynomial cfg;
    final int slot;
    final RunningScaler[] scalers;
    final Column[] cols;
    private final double[] powers;

    Polynomial(FeatureConfig.Polynomial cfg, RecordSchema s) {
      super(cfg.name());
      this.cfg = cfg;
      this.slot = s.slot(cfg.field());
      int d = cfg.degree();
      scalers = new RunningScaler[d];
      for (int k = 0; k < d; k++) {
        scalers[k] = new RunningScaler(cfg.scaling(), Transform.NONE, 1.0, cfg.weightingHalfLifeRecords(), cfg.clip());
      }
      cols = new Column[d];
      powers = new double[d];
    }

    @Override String kind() { return cfg.kind(); }
    @Override int maxColumns() { return cols.length; }
    @Override int fixedColumns() { return cols.length; }

    @Override void createFixedColumns(Featurizer f) {
      for (int k = 0; k < cols.length; k++) {
        cols[k] = f.append(new Column(name + "^" + (k + 1), cfg.scaling() == Scaling.NONE ? null : scalers[k]));
      }
    }

    private static boolean fill(double x, double[] p) {
      double v = x;
      for (int k = 0; k < p.length; k++) {
        p[k] = v;
        v *= x;
      }
      return Double.isFinite(p[p.length - 1]);
    }

    @Override RejectReason check(EventRecord r, Featurizer f) {
      if (!r.present(slot)) return missing(f, f.schema, slot);
      double x = r.number(slot);
      double p = x;
      for (int k = 1; k < cols.length; k++) p *= x;
      if (!Double.isFinite(p)) {
        f.setDetail("field " + cfg.field() + ": " + x + "^" + cols.length + " is not finite");
        return RejectReason.OUT_OF_RANGE;
      }
      return null;
    }

    @Override void learnScalers(EventRecord r, Featurizer f) {
      fill(r.number(slot), powers);
      for (int k = 0; k < cols.length; k++) {
        if (scalers[k].observe(powers[k]) && cols[k].scaler != null) f.rebase(cols[k]);
      }
    }

    @Override void write(EventRecord r, long t, double[] out, boolean training) {
      if (!training) fill(r.number(slot), powers);
      for (int k = 0; k < cols.length; k++) out[cols[k].index] = scalers[k].encode(powers[k]);
    }

    @Override void writeState(DataOutput out) throws IOException {
      for (RunningScaler s : scalers) s.writeTo(out);
    }

    @Override void readState(DataInput in) throws IOException {
      for (RunningScaler s : scalers) s.readFrom(in);
    }
  }

  /**
   * Products of the columns of two earlier one-hot or cyclic features. A cell column
   * {@code <a column>*<b column>} exists for every pair of parts; a one-hot's parts are its
   * "(other)" column and its level columns, so cells come and go with the levels (right after the
   * level's own column event). Those columns are unscaled, so no re-basing is needed.
   */
  private static final class Cross extends Feature {
    final FeatureConfig.Cross cfg;
    final Feature a;
    final Feature b;
    private final java.util.IdentityHashMap<Column, java.util.IdentityHashMap<Column, Column>> cells = new java.util.IdentityHashMap<>();

    Cross(FeatureConfig.Cross cfg, Feature a, Feature b) {
      super(cfg.name());
      this.cfg = cfg;
      this.a = a;
      this.b = b;
      if (a instanceof OneHot o) o.dependents.add(this);
      if (b instanceof OneHot o) o.dependents.add(this);
    }

    @Override String kind() { return cfg.kind(); }

    private static int maxParts(Feature f) {
      return f instanceof OneHot o ? o.cfg.maxLevels() + 1 : ((Cyclic) f).cols.length;
    }

    private static List<Column> partsOf(Feature f) {
      return f instanceof OneHot o ? o.parts : Arrays.asList(((Cyclic) f).cols);
    }

    @Override int maxColumns() {
      long n = (long) maxParts(a) * maxParts(b);
      return n > Integer.MAX_VALUE / 2 ? Integer.MAX_VALUE / 2 : (int) n;
    }

    @Override int fixedColumns() {
      return (a instanceof OneHot ? 1 : ((Cyclic) a).cols.length) * (b instanceof OneHot ? 1 : ((Cyclic) b).cols.length);
    }

    @Override void createFixedColumns(Featurizer f) {
      List<Column> pa = partsOf(a);
      List<Column> pb = partsOf(b);
      for (int i = 0; i < pa.size(); i++) {
        for (int j = 0; j < pb.size(); j++) put(pa.get(i), pb.get(j), f.append(new Column(pa.get(i).name + "*" + pb.get(j).name, null)));
      }
    }

    private void put(Column pa, Column pb, Column cell) {
      cells.computeIfAbsent(pa, k -> new java.util.IdentityHashMap<>()).put(pb, cell);
    }

    void restoreCell(Column pa, Column pb, Featurizer f) throws IOException {
      java.util.IdentityHashMap<Column, Column> row = cells.get(pa);
      if (row != null && row.containsKey(pb)) throw new IOException("corrupt checkpoint: cell " + pa.name + "*" + pb.name + " twice");
      put(pa, pb, f.append(new Column(pa.name + "*" + pb.name, null)));
    }

    void partAdded(Feature side, Column part, Featurizer f) {
      if (side == a) {
        List<Column> pb = partsOf(b);
        for (int j = 0; j < pb.size(); j++) {
          Column q = pb.get(j);
          put(part, q, f.addColumn(part.name + "*" + q.name, null));
        }
      } else {
        List<Column> pa = partsOf(a);
        for (int i = 0; i < pa.size(); i++) {
          Column q = pa.get(i);
          put(q, part, f.addColumn(q.name + "*" + part.name, null));
        }
      }
    }

    void partRemoved(Feature side, Column part, Featurizer f) {
      if (side == a) {
        java.util.IdentityHashMap<Column, Column> row = cells.remove(part);
        if (row == null) return;
        List<Column> pb = partsOf(b);
        for (int j = 0; j < pb.size(); j++) {
          Column cell = row.get(pb.get(j));
          if (cell != null) f.removeColumn(cell);
        }
      } else {
        List<Column> pa = partsOf(a);
        for (int i = 0; i < pa.size(); i++) {
          java.util.IdentityHashMap<Column, Column> row = cells.get(pa.get(i));
          Column cell = row == null ? null : row.remove(part);
          if (cell != null) f.removeColumn(cell);
        }
      }
    }

    void collectCells(int k, java.util.IdentityHashMap<Column, int[]> owners, java.util.IdentityHashMap<Column, Column[]> cellParts) {
      for (java.util.Map.Entry<Column, java.util.IdentityHashMap<Column, Column>> e : cells.entrySet()) {
        for (java.util.Map.Entry<Column, Column> g : e.getValue().entrySet()) {
          owners.put(g.getValue(), new int[] {k, PART_CELL});
          cellParts.put(g.getValue(), new Column[] {e.getKey(), g.getKey()});
        }
      }
    }

    @Override RejectReason check(EventRecord r, Featurizer f) { return null; }

    @Override void write(EventRecord r, long t, double[] out, boolean training) {
      if (a instanceof OneHot oa) {
        java.util.IdentityHashMap<Column, Column> row = cells.get(oa.written);
        if (b instanceof OneHot ob) {
          out[row.get(ob.written).index] = 1.0;
        } else {
          Column[] cb = ((Cyclic) b).cols;
          for (int j = 0; j < cb.length; j++) out[row.get(cb[j]).index] = out[cb[j].index];
        }
      } else {
        Column[] ca = ((Cyclic) a).cols;
        for (int i = 0; i < ca.length; i++) {
          java.util.IdentityHashMap<Column, Column> row = cells.get(ca[i]);
          double va = out[ca[i].index];
          if (b instanceof OneHot ob) {
            out[row.get(ob.written).index] = va;
          } else {
            Column[] cb = ((Cyclic) b).cols;
            for (int j = 0; j < cb.length; j++) out[row.get(cb[j]).index] = va * out[cb[j].index];
          }
        }
      }
    }
  }
}
