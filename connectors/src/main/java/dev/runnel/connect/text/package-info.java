/** Text for people: what every terminal writer passes data-derived text through. */
package dev.runnel.connect.text;
