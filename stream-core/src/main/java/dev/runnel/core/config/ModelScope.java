package dev.runnel.core.config;

/** Which records one model learns from (key {@code model.scope}; docs/model.md, "One model across partitions"). */
public enum ModelScope {
  /** Each partition keeps its own model, learned from its own records (today's behaviour). */
  PARTITION("partition"),
  /**
   * One model across partitions: each partition shares what its records contributed and folds in
   * the others' shares ({@code dev.runnel.core.model.GlobalModel}) through {@code <name>.shares}
   * (docs/operations.md, "Scaling").
   */
  GLOBAL("global");

  private final String word;
  ModelScope(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
