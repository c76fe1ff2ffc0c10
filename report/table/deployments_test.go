package table

import (
	"bytes"
	"encoding/csv"
	"errors"
	"math"
	"strings"
	"testing"
)

// deploymentsTable makes a deployments.csv of two deployments for two
// classes, with site names that need CSV quoting and unknown values.
func deploymentsTable() *Table {
	s := Deployments([][2]float64{{0, 0.1}, {0.1, math.Inf(1)}})
	t := New(s, 2)
	for k, c := range s.Columns {
		for i := 0; i < 2; i++ {
			switch c.Kind {
			case Count, Flag:
				t.Cols[k][i] = float64(i)
			case Number:
				if (k+i)%5 != 0 || c.Required {
					t.Cols[k][i] = 0.123456789 * float64(k+1)
				}
			}
		}
	}
	t.Cols[0][0], t.Cols[0][1] = 1, 2
	copy(t.TextCol("site"), []string{`Pier "North", west end`, ""})
	copy(t.TextCol("track_folder"), []string{"runs/a", "runs/b,2"})
	copy(t.TextCol("start_utc"), []string{"2026-06-14T09:00:00Z", ""})
	copy(t.TextCol("end_utc"), []string{"2026-06-14T09:05:00Z", ""})
	t.Round()
	return t
}

// deployments.csv: text fields with commas and quotes are written as
// RFC 4180 fields (encoding/csv, the reference reader, reads them back
// the same), reading and writing again gives the same bytes, and every
// value round-trips.
func TestDeploymentsRoundTrip(t *testing.T) {
	orig := deploymentsTable()
	var a bytes.Buffer
	if err := orig.Write(&a); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(bytes.NewReader(a.Bytes())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 3 || recs[1][1] != `Pier "North", west end` || recs[2][2] != "runs/b,2" {
		t.Fatalf("encoding/csv reads %q", recs)
	}
	back, err := Read(bytes.NewReader(a.Bytes()), orig.Schema, "deployments.csv")
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := back.Write(&b); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatalf("writing deployments.csv again changed it:\n%s\n%s", a.String(), b.String())
	}
	for k, c := range orig.Schema.Columns {
		for i := 0; i < 2; i++ {
			if c.Kind == Text {
				if back.Text[k][i] != orig.Text[k][i] {
					t.Errorf("%s row %d: %q, want %q", c.Name, i, back.Text[k][i], orig.Text[k][i])
				}
				continue
			}
			o, g := orig.Cols[k][i], back.Cols[k][i]
			if !(o == g || math.IsNaN(o) && math.IsNaN(g)) {
				t.Errorf("%s row %d: %v, want %v", c.Name, i, g, o)
			}
		}
	}
	// the per-class columns are there for both classes and "all"
	for _, g := range DeploymentGroups(2) {
		for _, name := range DeploymentClassColumns(g) {
			if orig.Schema.Index(name) < 0 {
				t.Errorf("no column %s", name)
			}
		}
	}
}

// A required text field left empty, and rows out of order, are refused
// with one sentence naming the file, line and column.
func TestDeploymentsBadInput(t *testing.T) {
	var a bytes.Buffer
	deploymentsTable().Write(&a)
	// empty the track folder of row 2: the third field of the line
	recs, _ := csv.NewReader(strings.NewReader(a.String())).ReadAll()
	recs[2][2] = ""
	var b bytes.Buffer
	w := csv.NewWriter(&b)
	w.WriteAll(recs)
	_, err := Read(bytes.NewReader(b.Bytes()), deploymentsTable().Schema, "deployments.csv")
	var te *Error
	if !errors.As(err, &te) || te.Line != 3 || te.Column != "track_folder" {
		t.Fatalf("empty track folder: %v", err)
	}
	recs[2][2] = "x"
	recs[2][0] = "1"
	b.Reset()
	w = csv.NewWriter(&b)
	w.WriteAll(recs)
	_, err = Read(bytes.NewReader(b.Bytes()), deploymentsTable().Schema, "deployments.csv")
	if !errors.As(err, &te) || te.Line != 3 || !strings.Contains(err.Error(), "deployment index") {
		t.Fatalf("repeated index: %v", err)
	}
}
