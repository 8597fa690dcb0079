/** The live web view: a small JDK HTTP server with one static page and a JSON endpoint fed from the pipeline's output topics. */
package dev.runnel.connect.web;
