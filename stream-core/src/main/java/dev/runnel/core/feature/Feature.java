package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.List;

/**
 * One feature kind: maps a record to its own columns and changes the layout only through
 * {@link Columns}. The {@link Featurizer} runs the kinds in the order of the {@code features}
 * list, phase by phase (see {@link Featurizer#learnAndEncode}); a kind takes part in a phase by
 * overriding its method and saying so ({@link #admits}, {@link #scales}). Each kind is one
 * package-private file; {@link #build} is the one place that maps a configuration record to a kind.
 */
abstract class Feature {

  /** Checkpoint ids of a part of a cross, written after the part's feature index (format 2). */
  static final int PART_OTHER = 0;
  static final int PART_LEVEL = 1;
  static final int PART_CYCLIC = 2;

  final String name;
  /** Position in the {@code features} list; the checkpoint names a column's owner by it. */
  final int position;
  /** The layout this kind writes to; set by {@link #attach}. */
  Columns columns;
  /** The detail of this kind's last non-null {@link #check}, e.g. {@code field price: missing}. */
  String detail = "";

  Feature(String name, int position) {
    this.name = name;
    this.position = position;
  }

  /**
   * The kind for {@code features[position]}.
   *
   * @param built the kinds before it (a cross names earlier features). Not modified.
   * @throws IllegalArgumentException if the kind is not available or a cross names a feature it cannot take
   */
  static Feature build(FeatureConfig fc, int position, Feature[] built, PipelineConfig config, RecordSchema schema) {
    if (fc instanceof FeatureConfig.OneHot o) return new OneHotFeature(o, position, schema);
    if (fc instanceof FeatureConfig.Cyclic c) return new CyclicFeature(c, position, schema, config.input().timeZone());
    if (fc instanceof FeatureConfig.Numeric n) return new NumericFeature(n, position, schema);
    if (fc instanceof FeatureConfig.Polynomial p) return new PolynomialFeature(p, position, schema);
    if (fc instanceof FeatureConfig.Cross x) return new CrossFeature(x, position, built);
    if (fc instanceof FeatureConfig.Bends b) return new BendsFeature(b, position, schema);
    if (fc instanceof FeatureConfig.SpecialDays d) return new SpecialDaysFeature(d, position, config.input().timeZone());
    if (fc instanceof FeatureConfig.Lag l) return new LagFeature(l, position, config, schema);
    if (fc instanceof FeatureConfig.Smoothed m) return new SmoothedFeature(m, position, config, schema);
    throw new IllegalArgumentException("features[" + position + "]: kind " + fc.kind() + " is not available in this version");
  }

  /** The configuration word of the kind, e.g. {@code onehot}; written into checkpoints. */
  abstract String kind();

  /** The most columns this feature can ever have. */
  abstract int maxColumns();

  /** The columns it creates in {@link #createFixedColumns}, which never move. */
  abstract int fixedColumns();

  /** Keeps {@code layout} for later changes and appends this feature's fixed columns to it. */
  final void attach(Columns layout) {
    this.columns = layout;
    createFixedColumns();
  }

  /** Appends the fixed columns ({@link Columns#append}, no events). */
  abstract void createFixedColumns();

  /** The record slot this feature cannot do without, or -1 (checked for every record before {@link #check}). */
  int requiredSlot() { return -1; }

  /**
   * Whether the record's values are in this feature's domain, beyond the presence of
   * {@link #requiredSlot} (which the caller has checked); only kinds that say {@link #checksDomain}
   * are asked. Reads state only; allocates nothing.
   */
  boolean inDomain(EventRecord r) { return true; }

  /** Whether {@link #inDomain} can be false. */
  boolean checksDomain() { return false; }

  /** Null if the record can be featurized by this feature, else the reason, with {@link #detail} set. */
  abstract RejectReason check(EventRecord r);

  /** Sets {@link #detail} and returns {@code MISSING_FIELD}. */
  final RejectReason missing(String field) {
    detail = "field " + field + ": missing";
    return RejectReason.MISSING_FIELD;
  }

  /** Whether the kind admits and expires columns ({@link #touchAndExpire}, {@link #admit}). */
  boolean admits() { return false; }

  /**
   * Training, phase 1: records sightings, then removes expired columns.
   *
   * @param recordIndex the 1-based index of this training record
   * @param clockMillis the stream clock after this record
   */
  void touchAndExpire(EventRecord r, long t, long clockMillis, long recordIndex) { }

  /** Training, phase 2: adds columns admitted by this record. */
  void admit(EventRecord r, long t, long recordIndex) { }

  /** Whether the kind has scalers that learn ({@link #learnScalers}). */
  boolean scales() { return false; }

  /** Training, phase 3: every scaler takes the record's value; a moved one re-bases its column. */
  void learnScalers(EventRecord r) { }

  /**
   * Whether the kind reads each entity's history ({@link #expire}, {@link #look}, {@link #remember}):
   * looked up before the scalers learn and the row is written, remembered after.
   */
  boolean historical() { return false; }

  /** Training, before {@link #look}: drops state past its age by the stream clock. */
  void expire(long clockMillis) { }

  /** Training and scoring, before {@link #learnScalers} and {@link #write}: looks up the record's history. Reads state only. */
  void look(EventRecord r, long targetMillis, long issueMillis) { }

  /** Training, after {@link #write}: remembers the record's actual. */
  void remember(EventRecord r, long targetMillis, long issueMillis) { }

  /** Whether {@link #write} reads other features' entries of the row (then it runs after every kind that does not). */
  boolean readsRow() { return false; }

  /**
   * Phase 4 (training) or the only phase (scoring): writes this feature's columns of the row.
   * Every other entry of {@code out} is left as it is; a kind that reads other features' entries
   * (a cross, its parts') says {@link #readsRow}.
   */
  abstract void write(EventRecord r, long t, double[] out, boolean training);

  /** Writes this feature's state (not its columns) to a checkpoint. */
  void writeState(DataOutput out) throws IOException { }

  /** Reads what {@link #writeState} wrote into a fresh feature. */
  void readState(DataInput in) throws IOException { }

  /** Reads the id of a part of a cross, as {@link #writePartId} wrote it, and returns that column. */
  interface PartReader {
    Column read(DataInput in) throws IOException;
  }

  /** Writes the id of {@code part}, a column of a crossable feature: the feature's position, then its own id. */
  static void writePartId(Column part, DataOutput out) throws IOException {
    out.writeInt(part.owner.position);
    part.owner.writePart(part, out);
  }

  /** Whether {@code c}, one of this feature's columns, comes and goes (is written by {@link #writeDynamicColumn}). */
  boolean isDynamic(Column c) { return false; }

  /** Writes what identifies the dynamic column {@code c} within this feature (after its position). */
  void writeDynamicColumn(Column c, DataOutput out) throws IOException {
    throw new IllegalStateException("column " + c.name + " is not a dynamic column");
  }

  /** Reads what {@link #writeDynamicColumn} wrote and appends that column ({@link Columns#append}). */
  void restoreDynamicColumn(DataInput in, PartReader parts) throws IOException {
    throw new IOException("corrupt checkpoint: column owner " + position + " has no dynamic columns");
  }

  /** Checks the state after all dynamic columns of a checkpoint were restored. */
  void checkRestored() throws IOException { }

  // ------------------------------------------------------------ parts of a cross

  /** Whether a cross may multiply this feature's columns (its parts). */
  boolean crossable() { return false; }

  /** The parts in layout order: fixed ones first, then those that come and go. */
  List<Column> parts() { throw new UnsupportedOperationException(kind()); }

  /** The most parts it can have. */
  int maxParts() { throw new UnsupportedOperationException(kind()); }

  /** The parts it has from the start. */
  int fixedParts() { throw new UnsupportedOperationException(kind()); }

  /** The number of parts that may be non-zero in the row last written. */
  int activeParts() { throw new UnsupportedOperationException(kind()); }

  /** Part {@code i} of those, {@code 0 <= i < activeParts()}. */
  Column activePart(int i) { throw new UnsupportedOperationException(kind()); }

  /** Tells {@code cross} of every part added or removed from now on (kinds whose parts come and go). */
  void addDependent(CrossFeature cross) { }

  /** Writes the id of part {@code c} within this feature (after this feature's position). */
  void writePart(Column c, DataOutput out) throws IOException { throw new UnsupportedOperationException(kind()); }

  /** The part with the id {@code partKind} and what follows it in {@code in}; null if the id is not one of this kind's. */
  Column readPart(int partKind, DataInput in) throws IOException { return null; }

  // ------------------------------------------------------------ snapshots

  /** The vocabulary of a kind that has one, else null. */
  RollingVocabulary vocabulary() { return null; }

  /** A copy of its vocabulary's state, or null (cold path). */
  Featurizer.VocabularySnapshot vocabularySnapshot() { return null; }
}
