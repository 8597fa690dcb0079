package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;

/**
 * One-hot over a rolling vocabulary of a text or flag field ({@code kind: onehot}): a fixed
 * {@code <name>=(other)} column and a column {@code <name>=<level>} per admitted level, added on
 * admission and removed on expiry. Its parts, for a cross, are the "(other)" column and the level
 * columns; exactly one of them is 1 in a row.
 */
final class OneHotFeature extends Feature {

  /** A level's column, which knows its key (for the checkpoint). */
  static final class LevelColumn extends Column {
    final String key;

    LevelColumn(String name, String key, Feature owner) {
      super(name, null, owner);
      this.key = key;
    }
  }

  private static final char[] TRUE = {'t', 'r', 'u', 'e'};
  private static final char[] FALSE = {'f', 'a', 'l', 's', 'e'};

  final FeatureConfig.OneHot cfg;
  final int slot;
  final boolean flag;
  final RollingVocabulary vocabulary;
  private final String field;
  private Column other;
  /** The "(other)" column, then the level columns in layout order: the parts a cross multiplies. */
  private final ArrayList<Column> parts = new ArrayList<>();
  private final ArrayList<CrossFeature> dependents = new ArrayList<>();
  /** The column set to 1 by the last write. */
  private Column written;
  private RollingVocabulary.Level current;

  OneHotFeature(FeatureConfig.OneHot cfg, int position, RecordSchema s) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.slot = s.slot(cfg.field());
    this.field = s.name(slot);
    this.flag = s.type(slot) == FieldType.FLAG;
    this.vocabulary = new RollingVocabulary(cfg.maxLevels(), cfg.minCount(), cfg.expireAfterMillis(), cfg.expireAfterRecords());
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return cfg.maxLevels() + 1; }
  @Override int fixedColumns() { return 1; }

  @Override void createFixedColumns() {
    other = columns.append(new Column(name + "=(other)", null, this));
    parts.add(other);
  }

  private String levelColumnName(String key) { return name + "=" + key; }

  /** The chars of the record's level: the text buffer, or "true"/"false" for a flag. */
  private char[] keyChars(EventRecord r) {
    if (flag) return r.flag(slot) ? TRUE : FALSE;
    return r.textChars(slot);
  }

  private int keyLength(EventRecord r) {
    if (flag) return r.flag(slot) ? 4 : 5;
    return r.textLength(slot);
  }

  @Override int requiredSlot() { return slot; }

  @Override RejectReason check(EventRecord r) {
    return r.present(slot) ? null : missing(field);
  }

  @Override boolean admits() { return true; }

  @Override void touchAndExpire(EventRecord r, long t, long clockMillis, long recordIndex) {
    current = vocabulary.touch(keyChars(r), 0, keyLength(r), t, recordIndex);
    RollingVocabulary.Level gone;
    while ((gone = vocabulary.expireOne(clockMillis, recordIndex, current)) != null) {
      Column c = gone.column;
      gone.column = null;
      columns.remove(c);
      parts.remove(c);
      for (int i = 0; i < dependents.size(); i++) dependents.get(i).partRemoved(this, c);
    }
  }

  @Override void admit(EventRecord r, long t, long recordIndex) {
    if (current != null) return;
    RollingVocabulary.Level l = vocabulary.sight(keyChars(r), 0, keyLength(r), t, recordIndex);
    if (l != null) {
      l.column = columns.add(new LevelColumn(levelColumnName(l.key), l.key, this));
      current = l;
      parts.add(l.column);
      for (int i = 0; i < dependents.size(); i++) dependents.get(i).partAdded(this, l.column);
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

  @Override boolean isDynamic(Column c) { return c instanceof LevelColumn; }

  @Override void writeDynamicColumn(Column c, DataOutput out) throws IOException {
    RollingVocabulary.writeString(out, ((LevelColumn) c).key);
  }

  @Override void restoreDynamicColumn(DataInput in, PartReader partReader) throws IOException {
    String key = RollingVocabulary.readString(in);
    RollingVocabulary.Level l = vocabulary.find(key);
    if (l == null || l.column != null) throw new IOException("corrupt checkpoint: level " + key + " of " + name);
    l.column = columns.append(new LevelColumn(levelColumnName(key), key, this));
    parts.add(l.column);
  }

  @Override void checkRestored() throws IOException {
    for (RollingVocabulary.Level l : vocabulary.levelsInOrder()) {
      if (l.column == null) throw new IOException("corrupt checkpoint: level " + l.key + " of " + name + " has no column");
    }
  }

  @Override boolean crossable() { return true; }
  @Override List<Column> parts() { return parts; }
  @Override int maxParts() { return cfg.maxLevels() + 1; }
  @Override int fixedParts() { return 1; }
  @Override int activeParts() { return 1; }
  @Override Column activePart(int i) { return written; }
  @Override void addDependent(CrossFeature cross) { dependents.add(cross); }

  @Override void writePart(Column c, DataOutput out) throws IOException {
    if (c == other) {
      out.writeByte(PART_OTHER);
    } else {
      out.writeByte(PART_LEVEL);
      RollingVocabulary.writeString(out, ((LevelColumn) c).key);
    }
  }

  @Override Column readPart(int partKind, DataInput in) throws IOException {
    if (partKind == PART_OTHER) return other;
    if (partKind != PART_LEVEL) return null;
    RollingVocabulary.Level l = vocabulary.find(RollingVocabulary.readString(in));
    if (l == null || l.column == null) throw new IOException("corrupt checkpoint: unknown level of " + name);
    return l.column;
  }

  @Override RollingVocabulary vocabulary() { return vocabulary; }

  @Override Featurizer.VocabularySnapshot vocabularySnapshot() {
    List<Featurizer.LevelSnapshot> ls = new ArrayList<>();
    for (RollingVocabulary.Level l : vocabulary.levelsInOrder()) {
      ls.add(new Featurizer.LevelSnapshot(l.key, l.column.index, l.count, l.firstSeenMillis, l.lastSeenMillis, l.lastSeenRecord));
    }
    return new Featurizer.VocabularySnapshot(name, cfg.field(), other.index, vocabulary.otherCount(), ls, vocabulary.candidateCount());
  }
}
