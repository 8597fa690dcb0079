/** Test support: the embedded-broker JUnit extension and Kafka helpers for tests. */
package dev.runnel.connect.testing;
