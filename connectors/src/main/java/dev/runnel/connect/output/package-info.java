/**
 * The encodings of the published records (predictions, settled forecasts, rejects): JSON
 * ({@code OutputJson} of stream-core) or Avro binary of the writer schemas shipped in the jar
 * ({@code outputs.encoding}, docs/formats.md), and the one reader that turns either back into the
 * JSON layout for every reader in the project; and {@code GlobalSnapshots}, the one model of a
 * {@code model.scope: global} pipeline followed through its partitions' snapshots, for the live page and {@code drift}.
 */
package dev.runnel.connect.output;
