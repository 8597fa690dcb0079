/**
 * Replaying recorded history through the pipeline: the sources (a recorded topic between a start
 * and an end, a plain or recorded JSON Lines file) and the drivers (sequential, or one reader and
 * one worker thread per configuration: {@link dev.runnel.connect.replay.ParallelReplay}). Every
 * number comes from {@link dev.runnel.core.evaluate}.
 */
package dev.runnel.connect.replay;
