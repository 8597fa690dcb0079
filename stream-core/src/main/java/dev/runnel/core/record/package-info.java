/**
 * Decoded event records: the schema (field name to slot and type), the reusable mutable
 * {@link dev.runnel.core.record.EventRecord}, the streaming JSON decoder and event-time parsing.
 * Bad input is reported as a {@link dev.runnel.core.record.RejectReason}, never as an exception.
 */
package dev.runnel.core.record;
