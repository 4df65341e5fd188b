// Package plot draws the charts of orbitwatch's benchmark reports and of a
// node's signature: line charts over time or over a number (linear or log
// scale) and horizontal bar charts of one node's orbit counts on a log
// scale. Each chart is laid out once and drawn either as a self-contained
// SVG (no scripts, no external fonts or styles) or as a PNG. The PNG font
// is ASCII only: accented letters lose their accents there, dashes become
// '-', and other non-ASCII runes '?'.
//
// It imports nothing of the project, so any package may use it. It is not
// a general plotting library: one chart size, one palette, no interaction.
package plot
