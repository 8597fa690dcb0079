/** The one-command demo: embedded broker, the invented Quillmarsh feed, the pipeline, and a summary of what it found. */
package dev.runnel.connect.demo;
