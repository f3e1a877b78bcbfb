// Package report builds the report the engagement team reads: one
// self-contained HTML file (inline CSS, inline SVG charts, no scripts,
// fonts or images fetched from anywhere) that opens offline in any browser
// and prints cleanly into a workpaper, and native charts for the XLSX
// workbook of a pack run.
//
// The report is assembled in two steps. FromWorkspace reads the workspace
// (the files, rejects and loads tables, and the latest stored run of each
// kind, or the runs named by id) into a Model; Write renders a Model as
// HTML. WriteFile does both. The Model is plain data, so a caller that
// holds results in memory (a pack run) can also fill one itself.
//
// Every number shown in the HTML is wrapped in an element carrying
//
//	data-field  a readable name, e.g. "first_two.mad"
//	data-value  the number exactly as stored (shortest round-trip form)
//	data-src    where it comes from: "run/ID#/json/pointer" into the stored
//	            result of run ID (RFC 6901 pointer), or "files/ID/column",
//	            "entities/NAME/column", "rejects/FILE_ID/REASON" for the
//	            completeness tables
//
// so that a test (or a reviewer with a script) can check each figure in the
// report against the JSON it came from.
//
// # Why the charts are drawn here
//
// The charts are SVG written by this package's own small drawing code
// (svg.go) rather than by a plotting library such as gonum's plot. gonum's
// plot can emit SVG, but it measures and embeds text through its own font
// machinery, writes text as positioned glyph runs that are hard to read
// back, and gives no hook for the things this report needs on every mark:
// a <title> per bar for screen readers and tooltips, role and aria labels,
// data attributes that tests find, CSS classes that print styles and the
// greyscale fallbacks (hatching, markers) can address. The charts needed
// are few and simple (bars against an expected line with bounds, a
// signed-difference chart, a range chart, a limit chart), so the code that
// draws them is short, has no dependencies, leaves the text to the
// browser's own fonts, and is tested mark by mark (bars = bins, flag
// markers = flagged bins, bounds present).
//
// # The look
//
// Plain and legible: system fonts, black text on white, tables with thin
// rules. Colours come from the Okabe-Ito palette, which stays distinct for
// the common forms of colour blindness: a dark blue for observed
// proportions and an orange for flagged bins, with a black expected line.
// Nothing relies on colour alone: flagged bars are also hatched and carry a
// triangle marker, bounds are dashed, surplus and shortfall stretches are
// shaded with different patterns, so the charts read in greyscale and on a
// black-and-white printer. Print styles start each section on a new page
// and drop every background except the chart fills.
//
// Results are signals for follow-up, never proof of fraud or error; the
// report says so at the top.
//
// It owns the HTML report and the workbook's charts, built from a named set
// of stored runs.
package report
