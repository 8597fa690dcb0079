package dev.runnel.core.feature;

import dev.runnel.core.layout.LayoutListener;
import java.util.ArrayList;
import java.util.List;

/**
 * A test double of the model side: records every layout event and keeps its own copy of the
 * column names and of a weight vector, applying each event as the LayoutListener contract says.
 */
final class RecordingListener implements LayoutListener {
  final List<String> events = new ArrayList<>();
  final List<String> names = new ArrayList<>();
  final List<Double> weights = new ArrayList<>();
  final boolean constantTerm;

  RecordingListener(List<String> initialNames, boolean constantTerm, double[] initialWeights) {
    names.addAll(initialNames);
    for (int i = 0; i < initialNames.size(); i++) weights.add(initialWeights == null ? 0.0 : initialWeights[i]);
    this.constantTerm = constantTerm;
  }

  @Override public void columnAdded(int index, String name) {
    events.add("add " + index + " " + name);
    if (index != names.size()) throw new AssertionError("columnAdded(" + index + ") must append at " + names.size());
    names.add(name);
    weights.add(0.0);
  }

  @Override public void columnRemoved(int index) {
    events.add("remove " + index + " " + names.get(index));
    names.remove(index);
    weights.remove(index);
  }

  @Override public void columnRebased(int column, double scale, double shift) {
    events.add("rebase " + column + " " + Double.doubleToRawLongBits(scale) + " " + Double.doubleToRawLongBits(shift));
    double w = weights.get(column);
    if (constantTerm) weights.set(0, weights.get(0) + w * shift);
    weights.set(column, w * scale);
  }

  double predict(double[] row) {
    double s = 0;
    for (int i = 0; i < weights.size(); i++) s += weights.get(i) * row[i];
    return s;
  }
}
