package slurm

import (
	"fmt"
	"slices"
	"sort"
	"strings"
)

// profileConfig is the optional [queue.batch.profile] table: fields of the
// preset named by scheduler to replace, so that a site's batch system (or
// a wrapper around one) can be targeted without code. Every key is
// optional; a key that is given replaces the preset's value whole.
type profileConfig struct {
	Name                string            `toml:"name"`
	Shebang             string            `toml:"shebang"`
	DirectivePrefix     string            `toml:"directive_prefix"`
	Directives          []directiveConfig `toml:"directive"`
	OwnedOptions        []string          `toml:"owned_options"`
	TaskIndexVar        string            `toml:"task_index_variable"`
	FirstIndex          *int              `toml:"first_index"`
	OutputFile          *string           `toml:"output_file"`
	ErrorFile           *string           `toml:"error_file"`
	Submit              []string          `toml:"submit"`
	SubmitOnStdin       *bool             `toml:"submit_on_stdin"`
	JobIDPattern        string            `toml:"job_id_pattern"`
	Status              []string          `toml:"status"`
	StatusLinePattern   string            `toml:"status_line_pattern"`
	StatusSkipUnmatched *bool             `toml:"status_skip_unmatched"`
	StatusNotFound      []string          `toml:"status_not_found"`
	FilterByName        *bool             `toml:"filter_by_name"`
	NameWidth           *int              `toml:"name_width"`
	IndexRanges         *bool             `toml:"index_ranges"`
	NoIndex             []string          `toml:"no_index"`
	States              map[string]string `toml:"states"`
	Cancel              []string          `toml:"cancel"`
	CancelByID          []string          `toml:"cancel_by_id"`
	CancelBatch         *int              `toml:"cancel_batch"`
	History             []string          `toml:"history"`
	HistoryLinePattern  string            `toml:"history_line_pattern"`
	HistoryDisabled     string            `toml:"history_disabled"`
}

// directiveConfig is one [[queue.batch.profile.directive]]: a directive
// line template and the setting it needs ("" for always).
type directiveConfig struct {
	When string `toml:"when"`
	Text string `toml:"text"`
}

// directiveSettings are the allowed values of a directive's "when".
var directiveSettings = []string{"", "partition", "time", "cpus", "mem", "account", "qos", "comment", "export", "signal"}

// Apply returns a copy of base with the given fields replaced, validated.
// Errors name the key under table (for example "queue.batch.profile").
func (c *profileConfig) Apply(base *Profile, table string) (*Profile, error) {
	p := *base
	bad := func(key, format string, args ...any) error {
		return fmt.Errorf("%s.%s: %s", table, key, fmt.Sprintf(format, args...))
	}
	str := func(dst *string, v string) {
		if v != "" {
			*dst = v
		}
	}
	list := func(dst *[]string, v []string) {
		if v != nil {
			*dst = slices.Clone(v)
		}
	}
	str(&p.Name, c.Name)
	str(&p.Shebang, c.Shebang)
	str(&p.DirectivePrefix, c.DirectivePrefix)
	if c.Directives != nil {
		p.Directives = nil
		for i, d := range c.Directives {
			if !slices.Contains(directiveSettings, d.When) {
				return nil, bad(fmt.Sprintf("directive[%d].when", i+1), "unknown setting %q (use one of %s, or leave it out for always)", d.When, strings.Join(directiveSettings[1:], ", "))
			}
			if strings.TrimSpace(d.Text) == "" || strings.ContainsAny(d.Text, "\n\r\x00") {
				return nil, bad(fmt.Sprintf("directive[%d].text", i+1), "want one non-empty line, got %q", d.Text)
			}
			p.Directives = append(p.Directives, Directive(d))
		}
	}
	list(&p.OwnedOptions, c.OwnedOptions)
	str(&p.TaskIndexVar, c.TaskIndexVar)
	if c.TaskIndexVar != "" && !envNameOK(c.TaskIndexVar) {
		return nil, bad("task_index_variable", "%q is not an environment variable name", c.TaskIndexVar)
	}
	if c.FirstIndex != nil {
		if *c.FirstIndex < 0 {
			return nil, bad("first_index", "must not be negative, got %d", *c.FirstIndex)
		}
		p.FirstIndex = *c.FirstIndex
	}
	if c.OutputFile != nil {
		p.OutputPattern = *c.OutputFile
	}
	if c.ErrorFile != nil {
		p.ErrorPattern = *c.ErrorFile
	}
	list(&p.Submit, c.Submit)
	if c.SubmitOnStdin != nil {
		p.SubmitStdin = *c.SubmitOnStdin
	}
	str(&p.JobID, c.JobIDPattern)
	list(&p.Status, c.Status)
	str(&p.StatusLine, c.StatusLinePattern)
	if c.StatusSkipUnmatched != nil {
		p.StatusSkipUnmatched = *c.StatusSkipUnmatched
	}
	list(&p.StatusNotFound, c.StatusNotFound)
	if c.FilterByName != nil {
		p.NameFilter = *c.FilterByName
	}
	if c.NameWidth != nil {
		if *c.NameWidth < 0 {
			return nil, bad("name_width", "must not be negative, got %d", *c.NameWidth)
		}
		p.NameTruncate = *c.NameWidth
	}
	if c.IndexRanges != nil {
		p.IndexRanges = *c.IndexRanges
	}
	list(&p.NoIndex, c.NoIndex)
	if c.States != nil {
		p.States = map[string]string{}
		words := make([]string, 0, len(c.States))
		for w := range c.States {
			words = append(words, w)
		}
		sort.Strings(words)
		for _, w := range words {
			v := strings.ToUpper(c.States[w])
			if Classify(v) == classUnknown {
				return nil, bad("states."+w, "%q is not a state wellscan knows; map each word to one of PENDING, RUNNING, COMPLETING, COMPLETED, FAILED, CANCELLED, TIMEOUT, OUT_OF_MEMORY, NODE_FAIL, PREEMPTED, SUSPENDED, REQUEUED", c.States[w])
			}
			p.States[w] = v
		}
	}
	list(&p.Cancel, c.Cancel)
	list(&p.CancelByID, c.CancelByID)
	if c.CancelBatch != nil {
		if *c.CancelBatch < 1 {
			return nil, bad("cancel_batch", "must be at least 1, got %d", *c.CancelBatch)
		}
		p.CancelBatch = *c.CancelBatch
	}
	list(&p.History, c.History)
	str(&p.HistoryLine, c.HistoryLinePattern)
	str(&p.HistoryDisabled, c.HistoryDisabled)
	for key, argv := range map[string][]string{"submit": p.Submit, "status": p.Status, "cancel": p.Cancel, "cancel_by_id": p.CancelByID, "history": p.History} {
		if len(argv) > 0 && (strings.TrimSpace(argv[0]) == "" || strings.Contains(argv[0], "{{")) {
			return nil, bad(key, "the first word must be a program name, got %q", argv[0])
		}
	}
	if err := p.validate(); err != nil {
		return nil, fmt.Errorf("%s: %w", table, err)
	}
	return &p, nil
}

func envNameOK(s string) bool {
	for i, r := range s {
		ok := r == '_' || (r >= 'A' && r <= 'Z') || (r >= 'a' && r <= 'z') || (i > 0 && r >= '0' && r <= '9')
		if !ok {
			return false
		}
	}
	return s != ""
}
