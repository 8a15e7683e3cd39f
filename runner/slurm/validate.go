package slurm

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"regexp"
	"strings"
)

// valueRE is what a scheduler value (partition, account, QoS, job name,
// comment token) may contain: no spaces, quotes, shell metacharacters or
// newlines. Common practice (SOURCES.md §7).
var valueRE = regexp.MustCompile(`^[A-Za-z0-9._:+,=@%-]+$`)

// optionNameRE is the shape of a long scheduler option name in an extra
// directive ("--gres", "--constraint").
var optionNameRE = regexp.MustCompile(`^--?[A-Za-z][A-Za-z0-9-]*$`)

// optionValueRE allows, in addition to valueRE, the slash of a path and the
// brackets of a node list ("node[01-04]").
var optionValueRE = regexp.MustCompile(`^[A-Za-z0-9._:+,=@%/\[\]-]+$`)

// validateValue checks one scheduler value against ^[A-Za-z0-9._:+,=@%-]+$.
// what names the value in the error ("partition", "account").
func validateValue(what, v string) error {
	if !valueRE.MatchString(v) {
		return fmt.Errorf("slurm: %s %q: only letters, digits and ._:+,=@%%- are allowed (no spaces, quotes or newlines)", what, v)
	}
	return nil
}

// validateExtraSyntax checks one extra directive: "--option",
// "--option=value" or "-o value" (one space), with a value made of letters,
// digits and ._:+,=@%/[]- only. Which options are owned by wellscan depends
// on the profile (Profile.checkExtra).
func validateExtraSyntax(d string) (name string, err error) {
	if strings.ContainsAny(d, "\n\r\x00") {
		return "", fmt.Errorf("slurm: extra directive %q contains a newline or NUL", d)
	}
	name, value, hasValue := strings.Cut(d, "=")
	if n, v, ok := strings.Cut(d, " "); ok && (!hasValue || len(n) < len(name)) {
		name, value, hasValue = n, v, true
	}
	if !optionNameRE.MatchString(name) {
		return "", fmt.Errorf("slurm: extra directive %q: want --option, --option=value or -o value", d)
	}
	if hasValue && !optionValueRE.MatchString(value) {
		return "", fmt.Errorf("slurm: extra directive %q: the value may contain only letters, digits and ._:+,=@%%/[]- (no spaces or quotes)", d)
	}
	return name, nil
}

// validatePathForDirective checks a path that goes into a directive line,
// where nothing is shell-expanded but whitespace would split the value and %
// starts a scheduler file-name pattern.
func validatePathForDirective(what, p string) error {
	if p == "" {
		return fmt.Errorf("slurm: %s is empty", what)
	}
	for _, r := range p {
		if r <= ' ' || r == 0x7f || r == '%' || r == '"' || r == '\'' || r == '\\' {
			return fmt.Errorf("slurm: %s %q: directive paths may not contain whitespace, quotes, backslashes, %% or control characters", what, p)
		}
	}
	return nil
}

// shq quotes s for a POSIX shell: single quotes, with ' written as '\”.
// Newlines are refused by the callers before rendering.
func shq(s string) string {
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// noNewline reports an error when s contains a line break or NUL.
func noNewline(what, s string) error {
	if strings.ContainsAny(s, "\n\r\x00") {
		return fmt.Errorf("slurm: %s %q contains a newline or NUL", what, s)
	}
	return nil
}

// JobNameFor returns the scan-unique job name "ws-<8 hex>" for a scan,
// derived from a stable scan identity (for example the spec fingerprint or
// the scan's creation record). All jobs of one scan carry this name, so one
// status query by name covers the whole scan.
func JobNameFor(scanIdentity string) string {
	sum := sha256.Sum256([]byte(scanIdentity))
	return "ws-" + hex.EncodeToString(sum[:4])
}
