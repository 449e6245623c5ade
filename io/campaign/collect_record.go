package campaign

import (
	"crypto/sha256"
	"encoding/hex"
	"io"
	"path/filepath"
	"strings"

	"github.com/bandsolve/bandsolve/io/cmdfile"
	"github.com/bandsolve/bandsolve/io/pipeline"

	"github.com/bandsolve/bandsolve/internal/regular"
)

// maxRecord bounds what is read of an as-run record: a real one is 2 kB.
const maxRecord = 1 << 20

// recordColumns are the context columns taken from the as-run record, by
// its keyword: settings that change what a rate constant means but that
// summary.json does not state.
var recordColumns = map[string]string{"region": "region", "exclude": "exclude", "drop": "drop",
	"hard-model": "hard_model", "c0": "c0", "fit-c0": "fit_c0", "k-fixed": "k_fixed"}

// inputKeywords name the experiment's inputs, which differ from row to row
// of a campaign by design; settings_id leaves them out.
var inputKeywords = map[string]bool{"data": true, "blank": true, "times": true}

// recordContext fills the context columns the as-run record holds, and
// settings_id (settingsID) over every setting line but the inputs, so
// rows with one settings_id are the same analysis of different data. A
// folder without a readable record (an older version, a record this
// version cannot parse) leaves them empty.
func (r *row) recordContext(dir string) {
	f := readRecord(filepath.Join(dir, pipeline.RecordName))
	if f == nil {
		return
	}
	vals := map[string][]string{}
	h := sha256.New()
	r.asked = map[string]string{}
	for _, e := range f.Entries {
		r.asked[e.Key] = e.Value
		if col, ok := recordColumns[e.Key]; ok && e.Value != "" {
			vals[col] = append(vals[col], e.Value)
		}
		if !inputKeywords[e.Key] {
			io.WriteString(h, e.Key+"\x00"+e.Value+"\n")
		}
	}
	for _, col := range recordColumns {
		r.cells[col] = strings.Join(vals[col], " ")
	}
	r.cells["settings_id"] = settingsID(h.Sum(nil))
}

// settingsID is "s" and the first 12 hex digits of the settings' SHA-256.
// The letter keeps a spreadsheet from reading the id as a number, which
// the digits alone may look like: 351901197280, or 254417705e29 read as
// 2.544e37 (a cell that parses as a number is one, common practice);
// the digits are the id collect wrote before the letter, so a table of
// then still joins with one of now on the id less its first letter.
func settingsID(sum []byte) string {
	return "s" + hex.EncodeToString(sum)[:12]
}

func readRecord(p string) *cmdfile.File {
	fh, st, err := regular.Open(p)
	if err != nil {
		return nil
	}
	if st.Size() > maxRecord {
		fh.Close()
		return nil
	}
	defer fh.Close()
	src, err := io.ReadAll(io.LimitReader(fh, maxRecord))
	if err != nil {
		return nil
	}
	f, err := cmdfile.Parse(p, src, pipeline.Keywords())
	if err != nil {
		return nil
	}
	return f
}
