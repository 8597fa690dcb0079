package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.runnel.core.record.EventRecord;
import java.util.List;
import org.junit.jupiter.api.Test;

class CrossFeatureTest {

  private static final String YAML = "name: x\ninput:\n  fields: {hub: text, holiday: flag, y: number}\ntarget: y\n"
      + "features:\n"
      + "  - {kind: onehot, field: hub, expire_after_records: 2}\n"
      + "  - {kind: cyclic, cycle: hour_of_day}\n"
      + "  - {kind: onehot, field: holiday}\n"
      + "  - {kind: cross, of: [hub, hour_of_day]}\n"
      + "  - {kind: cross, of: [holiday, hub]}\n";

  private final Featurizer f = new Featurizer(TestConfigs.parse(YAML));
  private final RecordingListener l = new RecordingListener(f.columnNames(), true, null);
  private final EventRecord r = new EventRecord(f.config().input().schema());
  private final double[] row = new double[f.maxDimension()];

  private void learn(String hub, boolean holiday, long t) {
    r.clear();
    r.setText(0, hub);
    r.setFlag(1, holiday);
    r.setNumber(2, 1.0);
    f.learnAndEncode(r, t, t, row);
    assertEquals(f.columnNames(), l.names, "listener follows the layout");
  }

  private double at(String column) { return row[f.columnNames().indexOf(column)]; }

  @Test void cellsFollowLevels_andHoldProductsOfTheirParts() {
    f.setListener(l);
    assertEquals(List.of("constant", "hub=(other)", "hour_of_day.sin1", "hour_of_day.cos1", "holiday=(other)",
        "hub=(other)*hour_of_day.sin1", "hub=(other)*hour_of_day.cos1", "holiday=(other)*hub=(other)"), f.columnNames());
    long sixAm = 6 * 3_600_000L; // 1970-01-01T06:00Z: hour angle pi/2
    learn("A", true, sixAm);
    assertEquals(List.of("add 8 hub=A", "add 9 hub=A*hour_of_day.sin1", "add 10 hub=A*hour_of_day.cos1",
        "add 11 holiday=(other)*hub=A", "add 12 holiday=true", "add 13 holiday=true*hub=(other)", "add 14 holiday=true*hub=A"),
        l.events);
    // common practice: sin(pi/2) = 1, cos(pi/2) = 0 (to rounding)
    assertEquals(StrictMath.sin(Math.PI / 2), at("hub=A*hour_of_day.sin1"), 0.0);
    assertEquals(StrictMath.cos(Math.PI / 2), at("hub=A*hour_of_day.cos1"), 0.0);
    assertEquals(0.0, at("hub=(other)*hour_of_day.sin1"));
    assertEquals(1.0, at("holiday=true*hub=A"));
    assertEquals(0.0, at("holiday=(other)*hub=A"));
    double rowSum = 0;
    for (int i = 0; i < f.dimension(); i++) rowSum += Math.abs(row[i]);
    // constant + hub=A + sin + |cos| + holiday=true + hub=A*sin + |hub=A*cos| + holiday=true*hub=A
    assertEquals(1 + 1 + 1 + Math.abs(Math.cos(Math.PI / 2)) + 1 + 1 + Math.abs(Math.cos(Math.PI / 2)) + 1, rowSum, 1e-15);

    learn("B", false, sixAm);
    learn("B", false, sixAm);
    l.events.clear();
    learn("B", false, sixAm); // A missed 3 records > 2: its column and its cells go, in that order
    assertEquals("remove 8 hub=A", l.events.get(0));
    assertEquals(List.of("hub=A*hour_of_day.sin1", "hub=A*hour_of_day.cos1", "holiday=(other)*hub=A", "holiday=true*hub=A"),
        l.events.subList(1, 5).stream().map(e -> e.substring(e.indexOf(' ', 7) + 1)).toList());
    for (String name : f.columnNames()) assertEquals(-1, name.indexOf("hub=A"), name);
  }
}
