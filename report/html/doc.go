// Package html renders an experiment report as one self-contained HTML file.
//
// It sits at the end of the pipeline, beside the text, Markdown and JSON
// renderers: the report model is turned into a Page of Sections, each a list
// of Blocks (headings, paragraphs, tables, collapsible details, SQL listings
// with one anchor per CTE, and plots), and Render writes the page.
//
// The page is readable offline and printable: all CSS is inline, every plot
// is inline SVG, there is no script, no web font, no image and no link that a
// browser would fetch. Links in tables may only point inside the page
// (#anchor); Render rejects any other link, duplicate ids and dangling
// anchors, so a number in a table can always be followed to the CTE that
// produced it.
//
// Plots are drawn by hand as SVG rather than with gonum/plot: gonum/plot
// brings its own font handling (it names or embeds TrueType fonts, which
// either depend on the reader's machine or add hundreds of kilobytes), emits
// absolute-positioned glyph runs that screen readers cannot read, and knows
// nothing of <title>/<desc> or patterns. The four plots needed here are a few
// hundred lines of plain SVG with text the browser lays out in the reader's
// own sans-serif font.
//
// Every plot is followed by a table of the numbers it draws, so no value is
// conveyed by a picture alone. Colour is never the only cue: marker kinds have
// distinct shapes, arms have distinct fill patterns as well as colours, and
// every series is named in text. Output is deterministic: coordinates and
// numbers are printed with fixed precision, and nothing depends on map order
// or the clock.
package html
