package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.layout.LayoutListener;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.EOFException;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;

/**
 * Turns decoded records into rows of the model, keeping the versioned column layout. One writer
 * thread.
 *
 * <p>Layout: column 0 is {@code constant} (always 1) when {@code model.constant_term}; then, in
 * the order of the {@code features} list, each feature's fixed columns (a one-hot's
 * {@code <name>=(other)}, a cyclic feature's {@code <name>.sin1, <name>.cos1, ...}, a numeric
 * feature's {@code <name>}, a polynomial's {@code <name>^1 ... <name>^d}, a bends feature's
 * {@code <name>, <name>>k ...} or {@code <name>, <name>.ns1 ...}, a special-days feature's
 * {@code <name>, <name>.before1 ..., <name>.after1 ...}); then the one-hot levels'
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
 * <p>Structure: each feature kind is a package-private class of its own ({@code OneHotFeature},
 * {@code CyclicFeature}, ...), built from its configuration record by {@code Feature.build}; the
 * columns, the layout version and the listener live in {@code Columns}, which the kinds write to.
 * The featurizer only runs the list of kinds, phase by phase, and frames the checkpoint.
 *
 * <p>Allocation: once warm and with a stable layout, the training and scoring paths allocate
 * nothing (a level is looked up by the chars of the record's text, without a {@code String};
 * admission creates one entry and its key).
 */
public final class Featurizer {

  /** Checkpoint format written by {@link #writeTo}; 2 no longer carries a stream time (the step's clock does). */
  public static final int FORMAT_VERSION = 2;

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
  private final boolean constantTerm;
  /** Every feature, in the order of the {@code features} list. */
  private final Feature[] features;
  /**
   * The features grouped by kind for writing the row: kinds in order of first appearance in the
   * list, except that kinds which read other features' entries (a cross) come after all others;
   * within a kind, list order. The first {@value #WRITE_SITES} groups are each written from a call
   * site of their own, so the JIT sees one kind per site and calls it directly (one loop over
   * every kind would call through a table, measured about 3 % slower for the featurizer alone,
   * docs/performance.md).
   */
  private final Feature[][] writeGroups;
  private static final int WRITE_SITES = 5;
  /**
   * The features that take part in each training phase, in list order: the per-record loops call
   * only those (so a call site mostly sees one or two kinds).
   */
  private final Feature[] admitting;
  private final Feature[] scaling;
  /** The features that read an entity's history (lag, smoothed), in list order. */
  private final Feature[] history;
  /** The features whose values have a domain (see {@link #plainlyValid}). */
  private final Feature[] domainChecked;
  /** The slots every feature reads, which a record must hold (see {@link #plainlyValid}). */
  private final int[] requiredSlots;
  private final int targetSlot;
  private final Columns columns;
  private long trainingRecords;
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
    this.constantTerm = config.model().constantTerm();
    this.targetSlot = schema.slot(config.target());
    List<FeatureConfig> fcs = config.features();
    features = new Feature[fcs.size()];
    long max = constantTerm ? 1 : 0;
    for (int i = 0; i < features.length; i++) {
      features[i] = Feature.build(fcs.get(i), i, features, config, schema);
      max += features[i].maxColumns();
    }
    List<Feature> a = new ArrayList<>();
    List<Feature> s = new ArrayList<>();
    List<Feature> d = new ArrayList<>();
    List<Feature> h = new ArrayList<>();
    List<Integer> slots = new ArrayList<>();
    for (Feature f : features) {
      if (f.admits()) a.add(f);
      if (f.scales()) s.add(f);
      if (f.checksDomain()) d.add(f);
      if (f.historical()) h.add(f);
      if (f.requiredSlot() >= 0) slots.add(f.requiredSlot());
    }
    admitting = a.toArray(new Feature[0]);
    scaling = s.toArray(new Feature[0]);
    domainChecked = d.toArray(new Feature[0]);
    history = h.toArray(new Feature[0]);
    requiredSlots = slots.stream().mapToInt(Integer::intValue).toArray();
    writeGroups = groupByKind(features);
    if (max > Integer.MAX_VALUE - 8) throw new IllegalArgumentException("the layout could grow to " + max + " columns; lower max_levels");
    columns = new Columns((int) max, constantTerm);
    if (constantTerm) columns.append(new Column("constant", null, null));
    for (Feature f : features) f.attach(columns);
  }

  private static Feature[][] groupByKind(Feature[] features) {
    java.util.LinkedHashMap<Class<?>, List<Feature>> plain = new java.util.LinkedHashMap<>();
    java.util.LinkedHashMap<Class<?>, List<Feature>> readers = new java.util.LinkedHashMap<>();
    for (Feature f : features) (f.readsRow() ? readers : plain).computeIfAbsent(f.getClass(), k -> new ArrayList<>()).add(f);
    List<Feature[]> out = new ArrayList<>();
    for (List<Feature> g : plain.values()) out.add(g.toArray(new Feature[0]));
    for (List<Feature> g : readers.values()) out.add(g.toArray(new Feature[0]));
    return out.toArray(new Feature[0][]);
  }

  // ---------------------------------------------------------------- layout

  /** Current number of columns. */
  public int dimension() { return columns.dimension(); }

  /** Upper bound of {@link #dimension()} for any input: size output arrays with it. */
  public int maxDimension() { return columns.maxDimension(); }

  /** Incremented on every column added or removed (not on re-basing). 0 after construction. */
  public long layoutVersion() { return columns.layoutVersion(); }

  /** Name of column {@code column}, e.g. {@code hub=H07}. */
  public String columnName(int column) { return columns.get(column).name; }

  /** Names of all columns in order (a copy; cold path). */
  public List<String> columnNames() { return columns.names(); }

  /** Whether column 0 is the constant term. */
  public boolean hasConstantTerm() { return constantTerm; }

  /** The centre {@code m} of a scaled column; 0 for other columns. */
  public double centre(int column) {
    Column c = columns.get(column);
    return c.scaler == null ? 0.0 : c.scaler.centre();
  }

  /** The scale {@code s} of a scaled column; 1 for other columns. */
  public double scale(int column) {
    Column c = columns.get(column);
    return c.scaler == null ? 1.0 : c.scaler.scale();
  }

  /** Sets who hears about layout changes; {@code null} means {@link LayoutListener#NONE}. */
  public void setListener(LayoutListener listener) { columns.setListener(listener); }

  /** Training records seen by {@link #learnAndEncode}. */
  public long trainingRecords() { return trainingRecords; }


  /** The configuration this featurizer was built from. */
  public PipelineConfig config() { return config; }

  // ---------------------------------------------------------------- records

  /** The detail of the last non-null {@link #check}, e.g. {@code field price: missing}. */
  public String lastDetail() { return detail; }

  /** {@link #check(EventRecord, boolean)} without requiring the target. */
  public RejectReason check(EventRecord r) { return check(r, false); }

  /**
   * Checks that every input the features need is present and valid: each feature's field, each
   * transform's domain; and the target when {@code requireTarget}. (Whether the event time is
   * present is the pipeline step's one check: it picks the time.) Reads state only.
   *
   * @param r a decoded record. Not modified.
   * @return null when the record can be featurized, else the reason ({@link #lastDetail()} says more)
   */
  public RejectReason check(EventRecord r, boolean requireTarget) {
    detail = "";
    if (!plainlyValid(r)) {
      for (Feature f : features) {
        RejectReason why = f.check(r);
        if (why != null) {
          detail = f.detail;
          return why;
        }
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
   * feature reads is present, and each value with a domain (a transform's, a polynomial's finite
   * highest power) is in it. When false, the features' own checks in order find the first problem
   * and its detail.
   */
  private boolean plainlyValid(EventRecord r) {
    int[] slots = requiredSlots;
    for (int i = 0; i < slots.length; i++) {
      if (!r.present(slots[i])) return false;
    }
    Feature[] ds = domainChecked;
    for (int i = 0; i < ds.length; i++) {
      if (!ds[i].inDomain(r)) return false;
    }
    return true;
  }

  /** Whether the record holds the target (a training record). */
  public boolean hasTarget(EventRecord r) { return r.present(targetSlot); }

  /** The record's target value; meaningful when {@link #hasTarget}. */
  public double target(EventRecord r) { return r.number(targetSlot); }

  /**
   * Training path: learns from the record, reporting layout changes, then encodes it.
   * The caller must have had {@code null} from {@link #check(EventRecord)} for this record.
   * {@link #learnAndEncode(EventRecord, long, long, long, double[])} with the issue time equal to {@code eventTimeMillis}.
   *
   * @param r a checked record. Not modified.
   * @param eventTimeMillis the record's event time (from the record or the transport)
   * @param clockMillis the stream clock after this record (the pipeline step's
   *     {@code StreamClock}; at least {@code eventTimeMillis} unless the record is late): levels
   *     expire by it
   * @param out receives the row in {@code out[0 .. dimension())} with the layout after this call;
   *     length at least {@link #maxDimension()} is always enough. Modified.
   */
  public void learnAndEncode(EventRecord r, long eventTimeMillis, long clockMillis, double[] out) {
    learnAndEncode(r, eventTimeMillis, eventTimeMillis, clockMillis, out);
  }

  /**
   * Training path with a target time apart from the issue time ({@code input.forecast}).
   * History kinds look up the record's history first (as of now, without this record), and
   * remember the record's actual only after its row is written, so a row never holds its own target.
   *
   * @param targetMillis the record's target time: the calendar features read it
   * @param issueMillis the record's issue time (its event time): a lag counts only values known by it
   */
  public void learnAndEncode(EventRecord r, long targetMillis, long issueMillis, long clockMillis, double[] out) {
    long n = ++trainingRecords;
    Feature[] as = admitting;
    for (int i = 0; i < as.length; i++) as[i].touchAndExpire(r, targetMillis, clockMillis, n);
    for (int i = 0; i < as.length; i++) as[i].admit(r, targetMillis, n);
    Feature[] hs = history;
    for (int i = 0; i < hs.length; i++) {
      hs[i].expire(clockMillis);
      hs[i].look(r, targetMillis, issueMillis);
    }
    Feature[] ss = scaling;
    for (int i = 0; i < ss.length; i++) ss[i].learnScalers(r);
    write(r, targetMillis, out, true);
    for (int i = 0; i < hs.length; i++) hs[i].remember(r, targetMillis, issueMillis);
  }

  /**
   * Scoring path: encodes the record with the current state and changes nothing. Levels that are
   * not admitted encode as "other".
   *
   * @param r a checked record. Not modified.
   * @param out receives the row in {@code out[0 .. dimension())}. Modified.
   */
  public void encode(EventRecord r, long eventTimeMillis, double[] out) {
    encode(r, eventTimeMillis, eventTimeMillis, out);
  }

  /** Scoring path with a target time apart from the issue time (see {@link #learnAndEncode(EventRecord, long, long, long, double[])}). */
  public void encode(EventRecord r, long targetMillis, long issueMillis, double[] out) {
    Feature[] hs = history;
    for (int i = 0; i < hs.length; i++) hs[i].look(r, targetMillis, issueMillis);
    write(r, targetMillis, out, false);
  }

  /** Whether a feature reads each entity's history (lag, smoothed): its state goes into checkpoint version 5. */
  public boolean readsHistory() { return history.length > 0; }

  private void write(EventRecord r, long t, double[] out, boolean training) {
    int n = columns.dimension();
    for (int i = 0; i < n; i++) out[i] = 0.0;
    if (constantTerm) out[0] = 1.0;
    Feature[][] g = writeGroups;
    int kinds = g.length;
    // WRITE_SITES copies of one loop: a call site per kind (see writeGroups)
    if (kinds > 0) {
      Feature[] fs = g[0];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
    if (kinds > 1) {
      Feature[] fs = g[1];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
    if (kinds > 2) {
      Feature[] fs = g[2];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
    if (kinds > 3) {
      Feature[] fs = g[3];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
    if (kinds > 4) {
      Feature[] fs = g[4];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
    for (int k = WRITE_SITES; k < kinds; k++) {
      Feature[] fs = g[k];
      for (int i = 0; i < fs.length; i++) fs[i].write(r, t, out, training);
    }
  }

  // ---------------------------------------------------------------- snapshots

  /** The vocabularies of all one-hot features (a copy; cold path). */
  public List<VocabularySnapshot> vocabularies() {
    List<VocabularySnapshot> out = new ArrayList<>();
    for (Feature f : features) {
      VocabularySnapshot v = f.vocabularySnapshot();
      if (v != null) out.add(v);
    }
    return out;
  }

  /** The state of every scaled column, in column order (a copy; cold path). */
  public List<ScalerSnapshot> scalers() {
    List<ScalerSnapshot> out = new ArrayList<>();
    for (int i = 0; i < columns.dimension(); i++) {
      Column c = columns.get(i);
      RunningScaler s = c.scaler;
      if (s != null) {
        out.add(new ScalerSnapshot(c.name, i, s.scaling().word(), s.transform().word(), s.count(), s.weightSum(),
            s.mean(), s.sd(), s.centre(), s.scale()));
      }
    }
    return out;
  }

  /** The feature named {@code featureName}, or null (tests of this package). */
  Feature feature(String featureName) {
    for (Feature f : features) if (f.name.equals(featureName)) return f;
    return null;
  }

  /** The vocabulary of one-hot feature {@code featureName}, or null (for tests and tools). */
  public RollingVocabulary vocabulary(String featureName) {
    for (Feature f : features) if (f.name.equals(featureName) && f.vocabulary() != null) return f.vocabulary();
    return null;
  }

  // ---------------------------------------------------------------- checkpoint

  /**
   * Writes the whole state: counters, vocabularies, scalers and the column order. Restoring it
   * with {@link #readFrom} into a fresh featurizer of the same configuration continues with the
   * same rows and layout events, bit for bit.
   *
   * <p>Format 2: the format, the features' names and kinds, the constant term, the training
   * records and the layout version; each feature's state; then the dynamic columns (those after
   * the fixed ones) in layout order, each as its owner's position and the owner's id of it (a
   * level's key; a cell's two parts, each as owner position, part kind and id); then the dimension.
   *
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
    out.writeLong(columns.layoutVersion());
    for (Feature f : features) f.writeState(out);
    int first = firstDynamicColumn();
    int dimension = columns.dimension();
    out.writeInt(dimension - first);
    for (int i = first; i < dimension; i++) {
      Column c = columns.get(i);
      if (c.owner == null || !c.owner.isDynamic(c)) {
        throw new IllegalStateException("column " + i + " (" + c.name + ") is not a dynamic column");
      }
      out.writeInt(c.owner.position);
      c.owner.writeDynamicColumn(c, out);
    }
    out.writeInt(dimension);
  }

  /** Reads a part's id as {@link Feature#writePartId} wrote it. */
  private Column readPart(DataInput in) throws IOException {
    int k = in.readInt();
    int kind = in.readByte();
    if (k < 0 || k >= features.length) throw new IOException("corrupt checkpoint: part owner " + k);
    Feature f = features[k];
    Column c = f.crossable() ? f.readPart(kind, in) : null;
    if (c == null) throw new IOException("corrupt checkpoint: part kind " + kind + " of " + f.name);
    return c;
  }

  /** Whether this featurizer has learned nothing yet (no training record, no dynamic column): what {@link #readFrom} needs. */
  public boolean isFresh() {
    return trainingRecords == 0 && columns.dimension() == firstDynamicColumn();
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
   * @return the stream time a format-1 state carried (the largest training time), for the pipeline
   *     step's clock; {@code Long.MIN_VALUE} for the current format, which carries none
   */
  public long readFrom(DataInput in) throws IOException {
    if (!isFresh()) {
      throw new IllegalStateException("readFrom needs a fresh featurizer; this one has seen " + trainingRecords + " records");
    }
    try {
      return read(in);
    } catch (EOFException e) {
      throw new EOFException("feature checkpoint is truncated");
    }
  }

  private long read(DataInput in) throws IOException {
    int version = in.readInt();
    if (version != FORMAT_VERSION && version != 1) {
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
    long legacyTime = version == 1 ? in.readLong() : Long.MIN_VALUE;
    long layoutVersion = in.readLong();
    for (Feature f : features) f.readState(in);
    int dynamic = in.readInt();
    if (dynamic < 0 || dynamic > columns.maxDimension()) throw new IOException("corrupt checkpoint: " + dynamic + " level columns");
    for (int i = 0; i < dynamic; i++) {
      int owner = in.readInt();
      if (owner < 0 || owner >= features.length) throw new IOException("corrupt checkpoint: column owner " + owner);
      features[owner].restoreDynamicColumn(in, this::readPart);
    }
    int dim = in.readInt();
    if (dim != columns.dimension()) throw new IOException("corrupt checkpoint: dimension " + dim + ", rebuilt " + columns.dimension());
    for (Feature f : features) f.checkRestored();
    columns.restoreLayoutVersion(layoutVersion);
    return legacyTime;
  }
}
