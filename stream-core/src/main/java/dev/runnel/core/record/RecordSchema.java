package dev.runnel.core.record;

import java.util.ArrayList;
import java.util.Collections;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The declared input fields: each name has a slot index (declaration order) and a type. Immutable
 * and safe to share between threads.
 */
public final class RecordSchema {

  private final String[] names;
  private final FieldType[] types;
  private final HashMap<String, Integer> slots;

  /**
   * @param fields field name to type, in declaration order. Not modified.
   * @throws IllegalArgumentException if a name is empty or a type is null
   */
  public RecordSchema(Map<String, FieldType> fields) {
    int n = fields.size();
    names = new String[n];
    types = new FieldType[n];
    slots = new HashMap<>(Math.max(4, n * 2));
    int i = 0;
    for (Map.Entry<String, FieldType> e : fields.entrySet()) {
      if (e.getKey() == null || e.getKey().isEmpty()) throw new IllegalArgumentException("field name must not be empty");
      if (e.getValue() == null) throw new IllegalArgumentException("field " + e.getKey() + ": type must not be null");
      names[i] = e.getKey();
      types[i] = e.getValue();
      slots.put(e.getKey(), i);
      i++;
    }
  }

  /** The slot of field {@code name}, or -1 if it is not declared. Allocates nothing. */
  public int slot(String name) {
    Integer s = slots.get(name);
    return s == null ? -1 : s;
  }

  /** The type of the field in {@code slot}. */
  public FieldType type(int slot) { return types[slot]; }

  /** The name of the field in {@code slot}. */
  public String name(int slot) { return names[slot]; }

  /** Number of declared fields. */
  public int size() { return names.length; }

  /** Field names in slot order (a copy). */
  public List<String> names() { return Collections.unmodifiableList(new ArrayList<>(List.of(names))); }

  /** Field name to type in slot order (a copy). */
  public Map<String, FieldType> fields() {
    LinkedHashMap<String, FieldType> m = new LinkedHashMap<>();
    for (int i = 0; i < names.length; i++) m.put(names[i], types[i]);
    return Collections.unmodifiableMap(m);
  }

  @Override public boolean equals(Object o) {
    return o instanceof RecordSchema s && java.util.Arrays.equals(names, s.names) && java.util.Arrays.equals(types, s.types);
  }

  @Override public int hashCode() { return java.util.Arrays.hashCode(names) * 31 + java.util.Arrays.hashCode(types); }

  @Override public String toString() { return fields().toString(); }
}
