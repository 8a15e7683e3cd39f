package planner

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sort"
	"sync"
)

// maxFingerprintFile bounds how much of one file the fingerprint reads: a
// template, a script or a parameter file an argument names is small; a
// larger file is identified by its size and modification time instead.
const maxFingerprintFile = 64 << 20

// fileHashes caches the hash of the files an engine reads, computed once
// per Spec (the files are read when the fingerprint is first asked for).
type fileHashes struct {
	once sync.Once
	sum  string
}

// engineFiles lists the files (absolute or relative to the spec's
// directory) whose contents change the energies of an external program:
// the input template, the shell script, and every command argument after
// the program that names an existing regular file. The program itself is
// left out (a binary can be very large; its path is in the engine hash).
func engineFiles(eng map[string]any, dir string) []string {
	cmd, ok := eng["command"].(map[string]any)
	if !ok {
		return nil
	}
	var out []string
	for _, k := range []string{"template", "script"} {
		if p, ok := cmd[k].(string); ok && p != "" {
			out = append(out, p)
		}
	}
	if args, ok := cmd["command"].([]any); ok {
		for i, a := range args {
			p, ok := a.(string)
			if !ok || i == 0 || p == "" {
				continue
			}
			full := p
			if !filepath.IsAbs(full) {
				full = filepath.Join(dir, p)
			}
			if st, err := os.Stat(full); err == nil && st.Mode().IsRegular() {
				out = append(out, p)
			}
		}
	}
	return out
}

// hashFiles hashes the names and contents of files; a file that cannot be
// read contributes its error text, so that it appearing later changes the
// hash.
func hashFiles(files []string, dir string) string {
	if len(files) == 0 {
		return ""
	}
	sort.Strings(files)
	h := sha256.New()
	for _, p := range files {
		full := p
		if !filepath.IsAbs(full) {
			full = filepath.Join(dir, p)
		}
		fmt.Fprintf(h, "%s\x00", p)
		f, err := os.Open(full)
		if err != nil {
			fmt.Fprintf(h, "unreadable\x00")
			continue
		}
		st, err := f.Stat()
		switch {
		case err != nil || !st.Mode().IsRegular():
			fmt.Fprintf(h, "not a regular file\x00")
		case st.Size() > maxFingerprintFile:
			fmt.Fprintf(h, "size %d modified %d\x00", st.Size(), st.ModTime().UnixNano())
		default:
			_, _ = io.Copy(h, io.LimitReader(f, maxFingerprintFile))
			h.Write([]byte{0})
		}
		f.Close()
	}
	return hex.EncodeToString(h.Sum(nil)[:8])
}
