/** JSON Lines files as a source of records. */
package dev.runnel.connect.file;
