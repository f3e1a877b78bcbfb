package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/leadline/leadline/engine/drill"
	"github.com/leadline/leadline/engine/jsondoc"
	"github.com/leadline/leadline/engine/numfmt"
	"github.com/leadline/leadline/engine/sample"
	"github.com/leadline/leadline/engine/workspace"
	"github.com/spf13/pflag"
)

// drillSample is what drill's --sample flags ask for.
type drillSample struct {
	Method string `json:"sample"`
	Size   int    `json:"sample_size"`
	Seed   int64  `json:"seed"`
}

// add registers --sample, --sample-size and --seed (the words of a pack
// extract's sample, sample_size and seed); the function it returns checks
// them against the other flags.
func (s *drillSample) add(fs *pflag.FlagSet) func(o *drillOptions) error {
	fs.StringVar(&s.Method, "sample", "", "draw a reproducible sample of the selected records: random (equal probability) or monetary (by |amount|)")
	fs.IntVar(&s.Size, "sample-size", drill.DefaultSampleSize, "records the sample asks for")
	fs.Int64Var(&s.Seed, "seed", 1, "the sample's seed: the same records and seed draw the same sample")
	return func(o *drillOptions) error {
		s.Method = strings.ToLower(strings.TrimSpace(s.Method))
		if s.Method == "" {
			if fs.Changed("sample-size") || fs.Changed("seed") {
				return fmt.Errorf("--sample-size and --seed need --sample random or --sample monetary")
			}
			return nil
		}
		if !contains(sample.Methods, s.Method) {
			return fmt.Errorf("--sample %q: give random (simple random, seeded) or monetary (monetary-unit: probability proportional to |amount|)", s.Method)
		}
		if s.Size <= 0 {
			return fmt.Errorf("--sample-size %d: give 1 or more", s.Size)
		}
		if s.Seed <= 0 {
			return fmt.Errorf("--seed %d: give a whole number of 1 or more", s.Seed)
		}
		for _, f := range []string{"group", "sort", "desc"} {
			if fs.Changed(f) {
				return fmt.Errorf("--%s and --sample together: a sample is drawn from the records in file order (leave out --%s)", f, f)
			}
		}
		return nil
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

// sampleCompanion is the file beside --out FILE that records the draw:
// NAME.sample.json.
func sampleCompanion(out string) string {
	return strings.TrimSuffix(out, filepath.Ext(out)) + ".sample.json"
}

// runDrillSample draws the sample, prints (or exports) its records and
// stores the draw as a drill run so that the report shows it.
func runDrillSample(ctx context.Context, e *env, o drillOptions, ws *workspace.Workspace, b *drill.Built, sum drill.Summary) error {
	started := time.Now()
	companion := ""
	if o.out != "" {
		companion = sampleCompanion(o.out)
		for _, p := range []string{o.out, companion} {
			if err := ws.CheckOutputFile(ctx, p); err != nil {
				return err
			}
		}
	}
	t, d, err := drill.Sample(ctx, ws, b, o.sample.Method, o.sample.Size, o.sample.Seed)
	if err != nil {
		return err
	}
	if d.PopulationRecords != sum.Records {
		return fmt.Errorf("drill --sample: the selection holds %d records but %d were numbered; nothing was drawn", sum.Records, d.PopulationRecords)
	}
	doc := drillJSON{Selection: b.Description, Records: sum.Records, Total: sum.Total, Shown: len(t.Rows), Columns: t.Columns, Rows: t.Records(),
		Sample: d, Out: o.out, Companion: companion}
	if o.out != "" {
		doc.OutFormat, _ = drill.ExportFormat(o.out)
		if err := drill.ExportSample(ctx, ws, d, o.out); err != nil {
			return err
		}
	}
	params := map[string]any{"selection": o.sel, "dup": o.dup, "sample": o.sample, "out": o.out}
	if _, err := ws.SaveRun(ctx, workspace.Run{Kind: "drill", Started: started, Params: params, Result: &doc, SetID: func(id int64) { doc.RunID = id }}); err != nil {
		return err
	}
	if companion != "" {
		f, err := os.Create(companion)
		if err != nil {
			return fmt.Errorf("--out: the sample's record %s: %w", companion, err)
		}
		meta := map[string]any{"selection": b.Description, "records": sum.Records, "total": sum.Total, "sample": d, "file": filepath.Base(o.out), "run_id": doc.RunID}
		if err := jsondoc.Write(f, meta); err != nil {
			f.Close()
			return err
		}
		if err := f.Close(); err != nil {
			return err
		}
	}
	switch o.format {
	case "json":
		return writeJSON(e.stdout, doc)
	case "csv":
		return t.WriteCSV(e.stdout)
	}
	w := e.stdout
	fmt.Fprintf(w, "Selection: %s\n", strings.Join(b.Description, "; "))
	fmt.Fprintf(w, "Population: %s records, total %s (sum of |amount| %s)\nOrder: %s\n", numfmt.Int(sum.Records), numfmt.Money(sum.Total), numfmt.Money(d.PopulationTotal), d.Order)
	method := "simple random (each record equally likely)"
	if d.Method == "monetary" {
		method = "monetary-unit (probability proportional to |amount|, systematic from a random start)"
	}
	fmt.Fprintf(w, "Sample: %s, seed %d, %s record(s) asked, %s selected\n", method, d.Seed, numfmt.Int(int64(d.Size)), numfmt.Int(int64(d.Selected)))
	if d.Method == "monetary" {
		fmt.Fprintf(w, "Sampling interval %s, random start %s: every record of |amount| >= %s is selected\n", numfmt.Money(d.Interval), numfmt.Money(d.Start), numfmt.Money(d.Interval))
	}
	fmt.Fprintf(w, "Stored as run %d (leadline report shows it)\n", doc.RunID)
	if o.out != "" {
		fmt.Fprintf(w, "Wrote the %s sampled records to %s, with empty follow-up columns; the draw to %s\n", numfmt.Int(int64(len(t.Rows))), o.out, companion)
		return nil
	}
	fmt.Fprintln(w)
	shown := t
	if len(t.Rows) > o.records.Limit {
		cp := *t
		cp.Rows = t.Rows[:o.records.Limit]
		shown = &cp
		defer fmt.Fprintf(w, "\n(showing the first %d of %d: --limit for more, --out FILE for all)\n", o.records.Limit, len(t.Rows))
	}
	dropped := drill.DropEmptyColumns(shown)
	if err := shown.WriteText(w, 40); err != nil {
		return err
	}
	if len(dropped) > 0 {
		fmt.Fprintf(w, "\n(empty in every row shown, not printed: %s)\n", strings.Join(dropped, ", "))
	}
	return nil
}
