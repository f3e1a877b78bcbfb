package pack

import "github.com/leadline/leadline/engine/field"

// engineErr reports under key a refusal the engine made of a pack's
// setting, so that the pack and the command line refuse a value for the
// same reason. A *field.Error is worded with the pack's names for the
// engine's fields: keys maps a field to its key ("" leaves the name out,
// as the problem shows its key); a field not in keys keeps its own name.
func (c *checker) engineErr(key string, err error, keys map[string]string) {
	c.errf(key, "%s", engineWords(err, keys))
}

// engineWords words err as engineErr reports it.
func engineWords(err error, keys map[string]string) string {
	fe, ok := field.As(err)
	if !ok {
		return err.Error()
	}
	return fe.Render(func(f string) string {
		if k, ok := keys[f]; ok {
			return k
		}
		return f
	})
}

// fieldKey is the pack key under table of the field err is about (by
// keys, as engineErr names it), or table itself when the error names no
// field.
func fieldKey(table string, err error, keys map[string]string) string {
	fe, ok := field.As(err)
	if !ok || fe.At() == "" {
		return table
	}
	if k, ok := keys[fe.At()]; ok && k != "" {
		return table + "." + k
	}
	return table + "." + fe.At()
}

// batteryKeys are the pack's keys of the digit battery's own settings.
var batteryKeys = map[string]string{"top": "duplication_top", "min_segment": "min_segment_rows"}
