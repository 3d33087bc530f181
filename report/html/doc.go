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
// Plots are drawn by hand as SVG rather than with gonum/plot: that would add
// the gonum.org/v1/plot module and its font and drawing packages to the build
// for four simple charts; its SVG names the Liberation fonts by default,
// which a reader's machine may lack, or embeds them, which adds their bytes
// to every report; and accessible names, descriptions and fill patterns would
// have to be patched into its output. Plain SVG with <text> lets the browser
// lay out labels in the reader's own sans-serif font, and keeps the markup
// small and reviewable in golden files.
//
// Every plot is followed by a table of the numbers it draws, so no value is
// conveyed by a picture alone. Colour is never the only cue: marker kinds have
// distinct shapes, arms have distinct fill patterns as well as colours, and
// every series is named in text. Output is deterministic: coordinates and
// numbers are printed with fixed precision, and nothing depends on map order
// or the clock.
package html
