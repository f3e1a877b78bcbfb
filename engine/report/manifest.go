package report

import (
	"encoding/json"
	"fmt"
	"html/template"
	"strings"

	"github.com/leadline/leadline/engine/output"
)

// manifestFrom reads a pack run's manifest (output.Manifest as JSON) into
// a readable section: what ran with which tool, the input files and the
// files written, each with its size and SHA-256. base is the manifest's
// source for data-src ("manifest.json#").
func manifestFrom(run *Run, data []byte, base, note string) (*ManifestSection, error) {
	var man output.Manifest
	if err := json.Unmarshal(data, &man); err != nil {
		return nil, err
	}
	R := srcRef(base, "", "manifest")
	text := func(s string) template.HTML { return template.HTML(template.HTMLEscapeString(s)) }
	code := func(s string) template.HTML {
		return template.HTML("<code>" + template.HTMLEscapeString(s) + "</code>")
	}
	ms := &ManifestSection{Run: run, Note: note}
	add := func(label string, v template.HTML) {
		if v != "" {
			ms.Facts = append(ms.Facts, Fact{Label: label, Value: v})
		}
	}
	tool := man.Tool
	if man.ToolVersion != "" {
		tool += " " + man.ToolVersion
	}
	if man.DuckDBVersion != "" {
		tool += " (DuckDB " + man.DuckDBVersion + ")"
	}
	add("made by", text(tool))
	add("manifest format", text(man.Format))
	p := man.Pack
	add("pack", text(strings.TrimSpace(p.Name)))
	add("client", text(p.Client))
	add("period", text(p.Period))
	if p.File != "" {
		add("pack file", code(p.File))
	}
	if p.SHA256 != "" {
		add("pack file SHA-256", template.HTML(`<span class="sha">`+template.HTMLEscapeString(p.SHA256)+`</span>`))
	}
	if man.Workspace != "" {
		add("workspace", code(man.Workspace))
	}
	add("amount type", text(man.AmountType))
	RR := R.At("run")
	if man.Run.RunID != 0 {
		add("run", RR.F("run_id", man.Run.RunID, "id"))
	}
	if !man.Run.StartedAt.IsZero() {
		add("started (UTC)", text(fmtTime(man.Run.StartedAt)))
	}
	if !man.Run.FinishedAt.IsZero() {
		add("finished (UTC)", text(fmtTime(man.Run.FinishedAt)))
	}
	if man.Run.WorkspaceAction != "" {
		w := man.Run.WorkspaceAction
		if man.Run.WorkspaceReason != "" {
			w += ": " + man.Run.WorkspaceReason
		}
		add("workspace", text(w))
	}
	if len(man.Run.StepRuns) > 0 {
		var parts []string
		for _, k := range sortedKeys(man.Run.StepRuns) {
			parts = append(parts, fmt.Sprintf("%s: run %d", k, man.Run.StepRuns[k]))
		}
		add("steps stored as runs of their own", text(strings.Join(parts, ", ")))
	}
	for i, in := range man.Inputs {
		r := R.At("inputs").AtField(i, in.Path)
		ms.Inputs = append(ms.Inputs, ManifestFile{Source: in.Source, Path: in.Path, SHA256: in.SHA256,
			SizeBytes: r.F("size_bytes", in.SizeBytes, "int"), RowsRead: r.F("rows_read", in.RowsRead, "int"),
			RowsLoaded: r.F("rows_loaded", in.RowsLoaded, "int"), RowsRejected: r.F("rows_rejected", in.RowsRejected, "int")})
	}
	for i, o := range man.Outputs {
		r := R.At("outputs").AtField(i, o.Path)
		ms.Outputs = append(ms.Outputs, ManifestFile{Path: o.Path, SHA256: o.SHA256, SizeBytes: r.F("size_bytes", o.SizeBytes, "int")})
	}
	return ms, nil
}
