/** The {@code runnel} command line: verbs {@code run}, {@code demo}, {@code replay}, {@code broker}. */
package dev.runnel.connect.cli;
