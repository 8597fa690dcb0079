/** Test support: NIST StRD reader and the log-relative-error measure. */
package dev.runnel.core.nist;
