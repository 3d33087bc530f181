package report

import (
	"fmt"
	"strings"
)

// MarkdownLimit is the default size cap of the Markdown report, in bytes:
// below the 65,536 characters a GitHub review comment holds (from memory),
// with room for a few lines around it.
const MarkdownLimit = 60000

// MarkdownCapped renders the report for a review comment: the summary and
// the main tables first, each metric's notes, the segment breakdowns and
// the cautions folded in collapsed <details> sections, and the whole kept
// under limit bytes (limit ≤ 0: no cap). To fit, whole breakdowns are left
// out, the last first, then the folded notes; a closing note names what was
// left out and how to get the full report. Nothing is cut mid-table.
func (r *Report) MarkdownCapped(limit int) string {
	d := r.document()
	d = foldForReview(d)
	full := d.markdown()
	if limit <= 0 || len(full) <= limit {
		return full
	}
	var left []string
	note := func() string {
		return fmt.Sprintf("> This comment is capped at %d bytes for code review; left out: %s. The full report: assay run (or analyze) with --format markdown --markdown-limit 0, or --format html for one page with plots, or --format json.\n",
			limit, strings.Join(left, "; "))
	}
	// Markdown renders block by block, so a document's size is the sum of
	// its blocks' sizes.
	sizes := func(d *document) []int {
		out := make([]int, len(d.blocks))
		for i, bl := range d.blocks {
			out[i] = len((&document{blocks: []block{bl}}).markdown())
		}
		return out
	}
	sz := sizes(d)
	total := 0
	for _, n := range sz {
		total += n
	}
	// Drop collapsed sections, segments (at the end) first, then the
	// folded metric notes, the last first.
	for total+len(note()) > limit {
		i := lastFold(d)
		if i < 0 {
			break
		}
		j := sectionEnd(d, i)
		for k := i; k <= j; k++ {
			total -= sz[k]
		}
		left = append(left, d.blocks[i].text)
		d.blocks = append(d.blocks[:i:i], d.blocks[j+1:]...)
		sz = append(sz[:i:i], sz[j+1:]...)
	}
	if total+len(note()) <= limit {
		return d.markdown() + note()
	}
	// Still too large: keep whole blocks (a folded section as one) while
	// they fit.
	keep := &document{}
	size, dropped := 0, 0
	for i := 0; i < len(d.blocks); i++ {
		j := i
		if d.blocks[i].kind == kOpen {
			j = sectionEnd(d, i)
		}
		n := 0
		for k := i; k <= j; k++ {
			n += sz[k]
		}
		if size+n+len(note())+80 > limit {
			dropped++
		} else {
			keep.blocks = append(keep.blocks, d.blocks[i:j+1]...)
			size += n
		}
		i = j
	}
	if dropped > 0 {
		left = append(left, fmt.Sprintf("%d further blocks (tables, notes or cautions)", dropped))
	}
	return keep.markdown() + note()
}

// foldForReview folds detail into collapsed sections: the notes under each
// metric table and the cautions. Text output is not affected (it renders
// the document without folding).
func foldForReview(d *document) *document {
	out := &document{}
	var metric string
	for i, bl := range d.blocks {
		switch {
		case bl.kind == kHeading && bl.level == 3:
			metric = bl.text
			if j := strings.Index(metric, " ["); j > 0 {
				metric = metric[:j]
			}
		case bl.kind == kHeading && bl.level <= 2:
			metric = ""
		}
		if bl.kind == kList && i > 0 && d.blocks[i-1].kind == kTable && metric != "" && !strings.Contains(metric, " by ") {
			out.blocks = append(out.blocks, block{kind: kOpen, text: "Notes on " + metric}, bl, block{kind: kClose})
			continue
		}
		if bl.kind == kHeading && bl.level == 2 && bl.text == "Cautions" && i+1 < len(d.blocks) && d.blocks[i+1].kind == kList {
			out.blocks = append(out.blocks, block{kind: kOpen, text: "Cautions"}, d.blocks[i+1], block{kind: kClose})
			// Skip the list, already folded.
			d.blocks[i+1] = block{kind: kPara, text: ""}
			continue
		}
		if bl.kind == kPara && bl.text == "" {
			continue
		}
		out.blocks = append(out.blocks, bl)
	}
	return out
}

// lastFold is the index of the last collapsed section to leave out:
// breakdowns before notes, the cautions never.
func lastFold(d *document) int {
	best := -1
	for i, bl := range d.blocks {
		if bl.kind == kOpen && strings.HasPrefix(bl.text, "Breakdown by ") {
			best = i
		}
	}
	if best >= 0 {
		return best
	}
	for i, bl := range d.blocks {
		if bl.kind == kOpen && strings.HasPrefix(bl.text, "Notes on ") {
			best = i
		}
	}
	return best
}

// sectionEnd is the index of the close block matching the open block at i.
func sectionEnd(d *document, i int) int {
	depth := 0
	for j := i; j < len(d.blocks); j++ {
		switch d.blocks[j].kind {
		case kOpen:
			depth++
		case kClose:
			depth--
		}
		if depth == 0 {
			return j
		}
	}
	return len(d.blocks) - 1
}
