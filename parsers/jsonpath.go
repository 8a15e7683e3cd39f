package parsers

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// JSONPath is a parsed path into a JSON document; see [ParseJSONPath]. The
// zero value selects the whole document.
type JSONPath struct {
	steps []jsonStep
}

type jsonStep struct {
	key   string
	index int
	isIdx bool
}

// maxJSONIndex bounds array indices in a path; no output holds a longer
// array, and the bound keeps index arithmetic far from overflow.
const maxJSONIndex = 1 << 30

// ParseJSONPath parses wellscan's small JSON path syntax: object keys
// separated by dots, each followed by any number of array indices in
// brackets. A negative index counts from the end (-1 is the last element).
// The path may start with an index when the document is an array, and the
// empty path selects the whole document.
//
//	result.energy          {"result": {"energy": -1.1}}
//	steps[-1].total        {"steps": [{"total": -1.0}, {"total": -1.1}]}
//	[0][2]                 [[0, 1, -1.1]]
//
// A key is any non-empty run of characters other than '.', '[' and ']'
// (spaces included, taken literally); keys holding those three characters
// cannot be reached.
func ParseJSONPath(s string) (JSONPath, error) {
	var p JSONPath
	if s == "" {
		return p, nil
	}
	bad := func(at int, what string) (JSONPath, error) {
		return JSONPath{}, fmt.Errorf("parsers: JSON path %q, at character %d: %s", clip(s), at+1, what)
	}
	i := 0
	first := true
	for i < len(s) {
		if !first {
			if s[i] != '.' {
				return bad(i, "expected '.' or '[' after a key or index")
			}
			i++
		}
		start := i
		for i < len(s) && s[i] != '.' && s[i] != '[' && s[i] != ']' {
			i++
		}
		if i > start {
			p.steps = append(p.steps, jsonStep{key: s[start:i]})
		} else if !first || i >= len(s) || s[i] != '[' {
			return bad(i, "expected a key")
		}
		for i < len(s) && s[i] == '[' {
			j := strings.IndexByte(s[i:], ']')
			if j < 0 {
				return bad(i, "'[' without ']'")
			}
			num := s[i+1 : i+j]
			n, err := strconv.Atoi(num)
			if err != nil || num == "" || num[0] == '+' || n > maxJSONIndex || n < -maxJSONIndex {
				return bad(i+1, fmt.Sprintf("array index %q is not an integer (negative counts from the end)", clip(num)))
			}
			p.steps = append(p.steps, jsonStep{index: n, isIdx: true})
			i += j + 1
		}
		if i < len(s) && s[i] == ']' {
			return bad(i, "']' without '['")
		}
		first = false
	}
	if s[len(s)-1] == '.' {
		return bad(len(s)-1, "path ends with '.'")
	}
	return p, nil
}

// String writes the path back in the syntax [ParseJSONPath] reads.
func (p JSONPath) String() string {
	var b strings.Builder
	for i, st := range p.steps {
		if st.isIdx {
			fmt.Fprintf(&b, "[%d]", st.index)
			continue
		}
		if i > 0 {
			b.WriteByte('.')
		}
		b.WriteString(st.key)
	}
	return b.String()
}

// Equal reports whether two paths select the same value.
func (p JSONPath) Equal(q JSONPath) bool {
	if len(p.steps) != len(q.steps) {
		return false
	}
	for i := range p.steps {
		if p.steps[i] != q.steps[i] {
			return false
		}
	}
	return true
}

// Lookup follows the path through a document decoded by encoding/json (with
// or without UseNumber). ok is false when a key or index is absent or the
// document's shape differs; where then says which step failed.
func (p JSONPath) Lookup(doc any) (v any, where string, ok bool) {
	v = doc
	for i, st := range p.steps {
		at := JSONPath{steps: p.steps[:i]}.String()
		if at == "" {
			at = "the top level"
		}
		if st.isIdx {
			arr, isArr := v.([]any)
			if !isArr {
				return nil, fmt.Sprintf("index [%d] asked of %s at %s", st.index, jsonKind(v), at), false
			}
			k := st.index
			if k < 0 {
				k += len(arr)
			}
			if k < 0 || k >= len(arr) {
				return nil, fmt.Sprintf("index [%d] is outside the %d-element array at %s", st.index, len(arr), at), false
			}
			v = arr[k]
			continue
		}
		obj, isObj := v.(map[string]any)
		if !isObj {
			return nil, fmt.Sprintf("key %q asked of %s at %s", clip(st.key), jsonKind(v), at), false
		}
		var has bool
		v, has = obj[st.key]
		if !has {
			return nil, fmt.Sprintf("no key %q at %s", clip(st.key), at), false
		}
	}
	return v, "", true
}

func jsonKind(v any) string {
	switch v.(type) {
	case nil:
		return "null"
	case bool:
		return "a boolean"
	case json.Number, float64:
		return "a number"
	case string:
		return "a string"
	case []any:
		return "an array"
	case map[string]any:
		return "an object"
	}
	return fmt.Sprintf("%T", v)
}

// findJSON decodes the documents in output, picks one by the match number,
// follows the path and returns the number's text.
func (x Extractor) findJSON(output []byte) (string, *ExtractError) {
	dec := json.NewDecoder(bytes.NewReader(output))
	dec.UseNumber()
	var docs []any
	for x.match < 0 || len(docs) < x.match {
		var d any
		err := dec.Decode(&d)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output is not JSON (document %d, near byte %d): %v", x.desc, len(docs)+1, dec.InputOffset(), err)}
		}
		docs = append(docs, d)
	}
	if len(docs) == 0 {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output holds no JSON document", x.desc)}
	}
	i := x.match - 1
	if x.match < 0 {
		i = len(docs) + x.match
	}
	if i < 0 || i >= len(docs) {
		return "", &ExtractError{Err: ErrEnergyMissing, Detail: fmt.Sprintf("looking for %s: the output holds %d JSON document(s), but %s was asked for", x.desc, len(docs), matchName(x.match))}
	}
	return x.jsonValue(docs[i])
}
