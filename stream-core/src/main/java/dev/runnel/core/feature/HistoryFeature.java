package dev.runnel.core.feature;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * What the history kinds ({@link LagFeature}, {@link SmoothedFeature}) share: each entity's state
 * in an {@link EntityTable} (bounded by {@code max_entities} and {@code expire_after}), two fixed
 * columns, {@code <name>} (the history value, scaled like a numeric column and re-based when its
 * scaler moves) and {@code <name>.missing} (1 when the value was not known, else 0), and the
 * imputation of a missing value.
 *
 * <p>No leakage: a record's value is looked up ({@link #look}) before anything of the record is
 * remembered; the record's own actual is remembered ({@link #remember}) only after its row is
 * written. So a row holds only actuals processed before its record, never its own target.
 *
 * <p>A missing value is imputed with the entity's plain mean of every actual of the field
 * remembered so far; for an entity with none, the mean over every entity's actuals so far; before
 * any actual, 0. The imputed value goes through the same scaler.
 */
abstract class HistoryFeature extends Feature {

  final int fieldSlot;
  final String field;
  final EntityTable entities;
  final RunningScaler scaler;
  private final int[] entitySlots;
  private final RecordSchema schema;
  Column valueColumn;
  Column missingColumn;

  /** The mean of every actual of the field remembered (the last fallback of imputation). */
  private long overallCount;
  private double overallMean;
  /** By entity id: its actuals remembered and their plain mean. */
  long[] entityCount = new long[0];
  double[] entityMean = new double[0];

  /** The record last looked up: its value (imputed when missing) and whether it was missing. */
  double value;
  boolean missing;

  HistoryFeature(String name, int position, String field, int maxEntities, long expireAfterMillis,
                 PipelineConfig config, RecordSchema schema) {
    super(name, position);
    this.schema = schema;
    this.fieldSlot = schema.slot(field);
    this.field = field;
    PipelineConfig.Forecast fc = config.input().forecast();
    if (!fc.enabled()) {
      throw new IllegalArgumentException("features[" + position + "].kind: " + kindWord() + " reads each entity's own history;"
          + " add input.forecast with entity_fields and target_time_field (docs/forecasting.md)");
    }
    entitySlots = new int[fc.entityFields().size()];
    for (int i = 0; i < entitySlots.length; i++) entitySlots[i] = schema.slot(fc.entityFields().get(i));
    this.entities = new EntityTable(entitySlots, maxEntities, expireAfterMillis, this::resetEntity);
    Scaling sc = config.model().constantTerm() ? Scaling.STANDARDIZE : Scaling.SCALE;
    this.scaler = new RunningScaler(sc, Transform.NONE, 1.0, 0, 0);
  }

  /** The kind's word, for messages before {@link #kind()} can be called. */
  abstract String kindWord();

  @Override final int maxColumns() { return 2; }
  @Override final int fixedColumns() { return 2; }

  @Override final void createFixedColumns() {
    valueColumn = columns.append(new Column(name, scaler, this));
    missingColumn = columns.append(new Column(name + ".missing", null, this));
  }

  @Override final boolean checksDomain() { return true; }

  @Override final boolean inDomain(EventRecord r) { return entities.hasEntity(r); }

  @Override final RejectReason check(EventRecord r) {
    int slot = entities.missingSlot(r);
    return slot < 0 ? null : missing(schema.name(slot));
  }

  @Override final boolean historical() { return true; }

  /** Training only, before {@link #look}: drops the entities past their age. */
  @Override final void expire(long clockMillis) { entities.expire(clockMillis); }

  /**
   * Looks up the record's history value as of now (actuals processed before this record), for
   * {@link #learnScalers} and {@link #write}. Reads state only; allocates nothing.
   *
   * @param targetMillis the record's target time
   * @param issueMillis the record's issue time (its event time)
   */
  @Override final void look(EventRecord r, long targetMillis, long issueMillis) {
    entities.keyOf(r);
    int id = entities.find();
    missing = id < 0 || !lookUp(id, targetMillis, issueMillis);
    if (missing) value = impute(id);
  }

  /** Sets {@link #value} from entity {@code id}'s state and returns true, or returns false when it has none. */
  abstract boolean lookUp(int id, long targetMillis, long issueMillis);

  /** The entity's own mean when it has actuals, else the overall mean, else 0. */
  private double impute(int id) {
    if (id >= 0 && entityCount[id] > 0) return entityMean[id];
    return overallCount > 0 ? overallMean : 0.0;
  }

  /**
   * Training only, after the row is written: remembers the record's value of the field (when
   * present and finite) as the entity's actual for its target time, known from its issue time.
   * Uses the entity key {@link #look} built for this same record (the featurizer calls both).
   */
  @Override final void remember(EventRecord r, long targetMillis, long issueMillis) {
    if (!r.present(fieldSlot)) return;
    double y = r.number(fieldSlot);
    if (!Double.isFinite(y)) return;
    int id = entities.update(issueMillis);
    long c = ++entityCount[id];
    entityMean[id] += (y - entityMean[id]) / c;
    long n = ++overallCount;
    overallMean += (y - overallMean) / n;
    rememberAt(id, y, targetMillis, issueMillis);
  }

  /** Adds actual {@code y} for {@code targetMillis}, known from {@code issueMillis}, to entity {@code id}'s state. */
  abstract void rememberAt(int id, double y, long targetMillis, long issueMillis);

  /** Clears the state of an id given to a new entity, growing the arrays to the table's id capacity first. */
  private void resetEntity(int id) {
    ensureIds(entities.idCapacity());
    entityCount[id] = 0;
    entityMean[id] = 0.0;
    clearEntity(id);
  }

  private void ensureIds(int n) {
    if (entityCount.length < n) {
      entityCount = Arrays.copyOf(entityCount, n);
      entityMean = Arrays.copyOf(entityMean, n);
      growEntities(n);
    }
  }

  /** Grows the kind's per-entity arrays to hold {@code n} ids. */
  abstract void growEntities(int n);

  /** Clears entity {@code id}'s state in the kind's arrays. */
  abstract void clearEntity(int id);

  @Override final boolean scales() { return true; }

  @Override final void learnScalers(EventRecord r) {
    if (scaler.observe(value)) columns.rebase(valueColumn);
  }

  @Override final void write(EventRecord r, long t, double[] out, boolean training) {
    out[valueColumn.index] = scaler.encode(value);
    out[missingColumn.index] = missing ? 1.0 : 0.0;
  }

  // ------------------------------------------------------------ checkpoint

  /**
   * The scaler, the overall mean, the entities (least recently updated first) and, in that order,
   * each entity's count, mean and the kind's state. The same state writes the same bytes.
   */
  @Override final void writeState(DataOutput out) throws IOException {
    scaler.writeTo(out);
    out.writeLong(overallCount);
    out.writeDouble(overallMean);
    entities.writeTo(out);
    for (int id : entities.idsOldestFirst()) {
      out.writeLong(entityCount[id]);
      out.writeDouble(entityMean[id]);
      writeEntity(id, out);
    }
  }

  @Override final void readState(DataInput in) throws IOException {
    scaler.readFrom(in);
    overallCount = in.readLong();
    overallMean = in.readDouble();
    int n = entities.readFrom(in);
    ensureIds(entities.idCapacity());
    for (int id = 0; id < n; id++) {
      entityCount[id] = in.readLong();
      entityMean[id] = in.readDouble();
      readEntity(id, in);
    }
  }

  abstract void writeEntity(int id, DataOutput out) throws IOException;

  abstract void readEntity(int id, DataInput in) throws IOException;

  /** Entities remembered now (tests, benchmarks). */
  int entityCount() { return entities.size(); }
}
