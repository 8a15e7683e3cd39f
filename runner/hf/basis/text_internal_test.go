package basis

import (
	"bufio"
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestLookup_NumberText_Unchanged checks that the embedded files keep the
// source's decimal strings character for character (testdata/numbers.txt,
// copied from the JSON extracts of the Basis Set Exchange data; see
// testdata/README.md), so that Write prints them unchanged.
func TestLookup_NumberText_Unchanged(t *testing.T) {
	fh, err := os.Open("testdata/numbers.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	sets := map[string]*Set{}
	n := 0
	sc := bufio.NewScanner(fh)
	for sc.Scan() {
		r := strings.Fields(sc.Text())
		if len(r) == 0 || strings.HasPrefix(r[0], "#") {
			continue
		}
		if sets[r[0]] == nil {
			s, err := Lookup(r[0])
			if err != nil {
				t.Fatal(err)
			}
			sets[r[0]] = s
		}
		el, err := sets[r[0]].elementBySymbol(r[1])
		if err != nil {
			t.Fatal(err)
		}
		shell, _ := strconv.Atoi(r[2])
		prim, _ := strconv.Atoi(r[5])
		sh := el.Shells[shell-1]
		got := ""
		if r[4] == "e" {
			got = sh.Exps[prim-1].Text
		} else {
			k, _ := strconv.Atoi(r[4][1:])
			got = sh.Coefs[k-1][prim-1].Text
		}
		if got != r[6] {
			t.Errorf("%s %s shell %d %s %d: text %q, want %q", r[0], r[1], shell, r[4], prim, got, r[6])
		}
		n++
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	if n < 500 {
		t.Errorf("only %d numbers checked", n)
	}
}

// TestList_OwnDescriptions: every embedded set has wellscan's own
// description, not the data's about line.
func TestList_OwnDescriptions(t *testing.T) {
	for _, in := range List() {
		s, err := Lookup(in.Name)
		if err != nil {
			t.Fatal(err)
		}
		if descriptions[Slug(in.Name)] == "" || in.Description != descriptions[Slug(in.Name)] || in.Description == s.f.About {
			t.Errorf("%s: description %q (data about line %q); want our own from descriptions", in.Name, in.Description, s.f.About)
		}
	}
	if len(descriptions) != len(List()) {
		t.Errorf("%d descriptions for %d embedded sets", len(descriptions), len(List()))
	}
}
