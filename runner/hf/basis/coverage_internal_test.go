package basis

import (
	"strings"
	"testing"
)

func TestCoverage_Ranges(t *testing.T) {
	tests := []struct {
		zs   []int
		want string
	}{
		{[]int{1}, "H"},
		{[]int{1, 2}, "H, He"},
		{[]int{1, 2, 3}, "H–Li"},
		{[]int{8, 1}, "H, O"},
		{[]int{1, 3, 4, 5, 6, 7, 8, 9, 10, 36}, "H, Li–Ne, Kr"},
	}
	for _, tc := range tests {
		if got := coverage(tc.zs); got != tc.want {
			t.Errorf("coverage(%v) = %q, want %q", tc.zs, got, tc.want)
		}
	}
}

func TestParse_NoTitle_Name(t *testing.T) {
	const body = "wellscan-basis 1\nelement H\nshell s\n 1 1\n"
	tests := []struct{ file, want string }{
		{"/home/me/my-DZ.basis", "my-DZ"},
		{"plain", "plain"},
		{"x.tar.basis", "x.tar"},
	}
	for _, tc := range tests {
		s, err := Parse(strings.NewReader(body), tc.file)
		if err != nil || s.Name() != tc.want {
			t.Errorf("Parse(%q).Name() = %v, %v; want %q", tc.file, s, err, tc.want)
		}
	}
	if _, err := Parse(strings.NewReader(body), ""); err == nil || !strings.Contains(err.Error(), `no "title" line`) {
		t.Errorf("Parse without title or name: error = %v", err)
	}
	s, err := Parse(strings.NewReader("wellscan-basis 1\ntitle Given\nelement H\nshell s\n 1 1\n"), "file.basis")
	if err != nil || s.Name() != "Given" {
		t.Errorf("title line ignored: %v, %v", s, err)
	}
}
