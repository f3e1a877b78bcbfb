package ranges

import (
	"math"
	"strconv"
	"strings"

	"github.com/leadline/leadline/engine/population"
)

// DefaultWorkspace is the command line's default --db; drill-down commands
// name the workspace only when it is another.
const DefaultWorkspace = "leadline.duckdb"

// DrillRange writes [from, to) as the FROM:TO of leadline drill --range,
// each end rounded up to the ledger's scale. For amounts held at that
// scale this selects exactly the same amounts: x >= a if and only if
// x >= ceil(a), and x < b if and only if x < ceil(b). So a logarithmic
// band [1258.925..., 1584.893...) becomes 1258.93:1584.90.
func DrillRange(from, to float64, scale int) string {
	return AmountText(from, scale) + ":" + AmountText(to, scale)
}

// AmountText writes a band edge rounded up to the ledger's scale, without
// trailing zeros: the value that selects the same amounts (see DrillRange).
func AmountText(v float64, scale int) string {
	if scale < 0 {
		scale = 0
	}
	p := math.Pow10(scale)
	u := math.Ceil(v*p - 1e-6) // the 1e-6 absorbs binary noise: 2.2500000000000004 is 2.25
	if u == 0 {
		u = 0 // not -0
	}
	s := strconv.FormatFloat(u/p, 'f', scale, 64)
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return s
}

// DrillCommand returns the leadline drill command that lists the records
// of a range (FROM:TO from DrillRange) within the selection base, narrowed
// to a segment (COLUMN=VALUE arguments, see Key.DrillSegments), on the
// workspace at path.
func DrillCommand(path, rangeSpec string, base population.Spec, segments []string) string {
	args := []string{"leadline", "drill"}
	if path != "" && path != DefaultWorkspace {
		args = append(args, "--db", path)
	}
	args = append(args, "--range", rangeSpec)
	for _, s := range segments {
		args = append(args, "--segment", s)
	}
	b := base.WithDefaults()
	if b.Signs != population.DefaultSigns {
		args = append(args, "--signs", b.Signs)
	}
	if b.Min != population.DefaultMin {
		args = append(args, "--min", b.Min)
	}
	if strings.TrimSpace(b.Where) != "" {
		args = append(args, "--where", b.Where)
	}
	for i, a := range args {
		args[i] = ShellQuote(a)
	}
	return strings.Join(args, " ")
}

// ShellQuote quotes an argument for a POSIX shell when it needs it:
// double quotes when that is enough (typical for SQL with 'strings'),
// single quotes otherwise.
func ShellQuote(s string) string {
	if s != "" && strings.IndexFunc(s, func(r rune) bool {
		return !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || strings.ContainsRune("-_.,:/=+@%", r))
	}) < 0 {
		return s
	}
	if !strings.ContainsAny(s, "\"$`\\!") {
		return `"` + s + `"`
	}
	return `'` + strings.ReplaceAll(s, `'`, `'\''`) + `'`
}
