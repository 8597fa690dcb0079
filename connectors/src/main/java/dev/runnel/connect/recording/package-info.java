/**
 * Moving history between a topic and a JSON Lines file: the recorder (a topic range to a file,
 * keys, timestamps and partitions kept) and the loader (a file back into a topic).
 */
package dev.runnel.connect.recording;
