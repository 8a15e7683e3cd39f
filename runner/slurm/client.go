package slurm

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"time"
)

// submitErrorKind says what a rejected submission means for the caller.
type submitErrorKind int

const (
	// submitUnknown: the scheduler refused for a reason not recognised.
	submitUnknown submitErrorKind = iota
	// submitRejected: the request itself is wrong (partition, memory, time,
	// array size, account); resubmitting unchanged cannot succeed.
	submitRejected
	// submitLimit: a submission limit is reached; wait and submit later. The
	// points are not failed.
	submitLimit
	// submitUnreachable: the scheduler could not be contacted. The job may
	// still have been created: look it up by its token before resubmitting.
	submitUnreachable
)

func (k submitErrorKind) String() string {
	switch k {
	case submitRejected:
		return "rejected"
	case submitLimit:
		return "limit reached"
	case submitUnreachable:
		return "scheduler unreachable"
	}
	return "unknown"
}

// submitError is a submission the scheduler did not accept.
type submitError struct {
	Profile  string
	Script   string
	ExitCode int
	// Message is the scheduler's own message (stderr, trimmed).
	Message string
	Kind    submitErrorKind
}

func (e *submitError) Error() string {
	return fmt.Sprintf("slurm: submit %s (%s): %s, exit %d: %s", e.Script, e.Profile, e.Kind, e.ExitCode, e.Message)
}

// commandError is a status, history or cancel command that failed.
type commandError struct {
	Argv     []string
	ExitCode int
	Message  string
	// Unreachable is true when the message says the scheduler could not be
	// contacted (a transient outage, not a property of the jobs).
	Unreachable bool
}

func (e *commandError) Error() string {
	return fmt.Sprintf("slurm: %s: exit %d: %s", strings.Join(e.Argv, " "), e.ExitCode, e.Message)
}

// errNoAccounting is returned by Client.listHistory when the site keeps no
// accounting (Slurm: "accounting storage is disabled"), or the profile has
// no history command.
var errNoAccounting = errors.New("slurm: no accounting on this scheduler")

// Texts in Slurm's messages (observed with Slurm 22.05 on the local node,
// SOURCES.md §4 and §2).
var (
	rejectedTexts = []string{
		"Invalid partition", "Requested node configuration is not available", "Invalid job array specification",
		"Invalid account", "Invalid qos", "Requested time limit is invalid", "Invalid --time", "Invalid time",
		"Memory specification can not be satisfied", "More processors requested than permitted",
		"Invalid feature specification", "Invalid generic resource",
	}
	limitTexts = []string{
		"AssocMaxSubmitJobLimit", "QOSMaxSubmitJob", "MaxSubmitJobs", "violates accounting/QOS policy",
		"Job submit limit", "Slurm temporarily unable to accept job",
	}
	unreachableTexts = []string{
		"Unable to contact slurm controller", "Socket timed out", "Connection refused", "Zero Bytes were transmitted",
		"Communication connection failure",
	}
)

func containsAny(s string, subs []string) bool {
	for _, t := range subs {
		if strings.Contains(s, t) {
			return true
		}
	}
	return false
}

// classifySubmitFailure turns a failed submission's exit code and stderr into
// a kind. Exit code 255 without a known text is a command-line error
// (sbatch's argument parser), hence rejected.
func classifySubmitFailure(exitCode int, stderr string) submitErrorKind {
	switch {
	case containsAny(stderr, unreachableTexts):
		return submitUnreachable
	case containsAny(stderr, limitTexts):
		return submitLimit
	case containsAny(stderr, rejectedTexts), exitCode == 255:
		return submitRejected
	}
	return submitUnknown
}

// Client runs one profile's commands through a Runner.
type Client struct {
	profile *Profile
	runner  Runner

	jobID, status, history *regexp.Regexp
}

// NewClient validates the profile and prepares its patterns.
func NewClient(p *Profile, r Runner) (*Client, error) {
	if p == nil || r == nil {
		return nil, errors.New("slurm: NewClient needs a profile and a runner")
	}
	if err := p.validate(); err != nil {
		return nil, err
	}
	c := &Client{profile: p, runner: r}
	c.jobID = regexp.MustCompile(p.JobID)
	c.status = regexp.MustCompile(p.StatusLine)
	if len(p.History) > 0 {
		c.history = regexp.MustCompile(p.HistoryLine)
	}
	return c, nil
}

// Profile returns the client's profile; callers must not modify it.
func (c *Client) Profile() *Profile { return c.profile }

// submit submits a rendered script through argv (`sbatch --parsable FILE`
// for Slurm) and returns the job id. A refusal is a *submitError. It
// never retries: after a submitUnreachable error the job may exist, and the
// caller must look for its token first.
func (c *Client) submit(ctx context.Context, script string) (string, error) {
	return c.submitEnv(ctx, script, nil)
}

// submitEnv is submit with the submit command's environment env (nil: the
// runner's default); a job that takes its environment from the
// submission (--export=ALL) gets env. See jobEnv.
func (c *Client) submitEnv(ctx context.Context, script string, env []string) (string, error) {
	p := c.profile
	argv, err := expandArgv(p.Submit, map[string]any{"Script": script}, nil)
	if err != nil {
		return "", err
	}
	cmd := Cmd{Argv: argv, Env: env}
	if p.SubmitStdin {
		cmd.Stdin = script
	}
	out, err := c.runner.Run(ctx, cmd)
	if err != nil {
		return "", err
	}
	msg := strings.TrimSpace(string(out.Stderr))
	if out.ExitCode != 0 {
		return "", &submitError{Profile: p.Name, Script: script, ExitCode: out.ExitCode, Message: msg,
			Kind: classifySubmitFailure(out.ExitCode, msg)}
	}
	id, err := parseJobID(c.jobID, out.Stdout)
	if err != nil {
		return "", &submitError{Profile: p.Name, Script: script, Message: err.Error() + "; stderr: " + msg}
	}
	return id, nil
}

// parseJobID finds the job id in submit output with the profile's pattern
// (group "id"), on the first line that matches.
func parseJobID(re *regexp.Regexp, stdout []byte) (string, error) {
	idx := re.SubexpIndex("id")
	for _, line := range strings.Split(string(stdout), "\n") {
		if m := re.FindStringSubmatch(strings.TrimSpace(line)); m != nil && m[idx] != "" {
			return m[idx], nil
		}
	}
	return "", fmt.Errorf("no job id in submit output %q", truncate(string(stdout), 200))
}

func truncate(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[:n] + "…"
}

// noTask is the Index of a job that is not an array task.
const noTask = -1

// TaskState is one array task (or plain job) as the scheduler reports it.
type TaskState struct {
	// ID is the scheduler's own id of this task (Slurm %A: a task gets its
	// own id when it starts); Array and Index identify it within the array.
	ID    string
	Array string
	Index int
	// State is a Slurm base state name (see [Classify]); "" when the
	// scheduler's word is not in the profile's state map. Native is the word
	// as printed (first word only: "CANCELLED by 0" gives "CANCELLED").
	State, Native string
	Reason        string
	// Comment is the job's comment where the status command shows it; for
	// jobs wellscan submitted it is "ws:<token>" (see TaskState.token).
	Comment string
	// ExitCode is "code:signal" where the history command reports it.
	ExitCode string
	// FromHistory is true when the state came from the accounting history.
	FromHistory bool
}

// token returns the submission token from the task's comment ("ws:<token>"),
// so that after a crash between recording a submission and learning its job
// id, the job can be found in one status listing and adopted.
func (t TaskState) token() (string, bool) {
	return strings.CutPrefix(t.Comment, "ws:")
}

// taskRef identifies an array task: array job id and index. Match tasks by
// these, never by id arithmetic (SOURCES.md §11).
type taskRef struct {
	Array string
	Index int
}

func (r taskRef) String() string {
	if r.Index == noTask {
		return r.Array
	}
	return r.Array + "_" + strconv.Itoa(r.Index)
}

// ref returns the task's identity.
func (t TaskState) ref() taskRef { return taskRef{Array: t.Array, Index: t.Index} }

func (c *Client) commandError(argv []string, out Output) *commandError {
	msg := strings.TrimSpace(string(out.Stderr))
	return &commandError{Argv: argv, ExitCode: out.ExitCode, Message: msg, Unreachable: containsAny(msg, unreachableTexts)}
}

// listStatus runs the profile's one batched status command for all jobs named
// jobName and parses every task it lists. "No such job" answers give an
// empty list.
func (c *Client) listStatus(ctx context.Context, jobName string) ([]TaskState, error) {
	if err := validateValue("job name", jobName); err != nil {
		return nil, err
	}
	argv, err := expandArgv(c.profile.Status, map[string]any{"JobName": jobName}, nil)
	if err != nil {
		return nil, err
	}
	out, err := c.runner.Run(ctx, Cmd{Argv: argv})
	if err != nil {
		return nil, err
	}
	if out.ExitCode != 0 {
		if containsAny(string(out.Stderr), c.profile.StatusNotFound) {
			return nil, nil
		}
		return nil, c.commandError(argv, out)
	}
	return c.parseLines(c.status, out.Stdout, jobName, false)
}

// parseStatus parses status output with the client's profile (for
// tests and for reading saved outputs).
func (c *Client) parseStatus(out []byte, jobName string) ([]TaskState, error) {
	return c.parseLines(c.status, out, jobName, false)
}

// parseHistory parses history output with the client's profile.
func (c *Client) parseHistory(out []byte, jobName string) ([]TaskState, error) {
	if c.history == nil {
		return nil, errNoAccounting
	}
	return c.parseLines(c.history, out, jobName, true)
}

func (c *Client) parseLines(re *regexp.Regexp, out []byte, jobName string, history bool) ([]TaskState, error) {
	p := c.profile
	group := func(m []string, name string) string {
		if i := re.SubexpIndex(name); i >= 0 {
			return strings.TrimSpace(m[i])
		}
		return ""
	}
	var tasks []TaskState
	for n, line := range bytes.Split(out, []byte("\n")) {
		text := strings.TrimRight(string(line), "\r")
		if strings.TrimSpace(text) == "" {
			continue
		}
		m := re.FindStringSubmatch(text)
		if m == nil {
			if history || p.StatusSkipUnmatched {
				continue
			}
			return nil, fmt.Errorf("slurm: %s status output line %d: unexpected %q", p.Name, n+1, truncate(text, 200))
		}
		if p.NameFilter && !history && !p.nameBelongs(group(m, "name"), jobName) {
			continue
		}
		native, _, _ := strings.Cut(group(m, "state"), " ")
		native = strings.TrimRight(native, "+")
		t := TaskState{
			ID: group(m, "id"), Array: group(m, "array"), Native: native, State: p.States[native],
			Reason: group(m, "reason"), Comment: group(m, "comment"), ExitCode: group(m, "exit"), FromHistory: history,
		}
		if t.Array == "" {
			t.Array = t.ID
		}
		if t.Array == "" {
			return nil, fmt.Errorf("slurm: %s status output line %d: no job id in %q", p.Name, n+1, truncate(text, 200))
		}
		idx := group(m, "index")
		var indexes []int
		switch {
		case idx == "" || slices.Contains(p.NoIndex, idx):
			indexes = []int{noTask}
		default:
			var err error
			indexes, err = parseIndexes(idx, p.IndexRanges)
			if err != nil {
				return nil, fmt.Errorf("slurm: %s status output line %d: %w", p.Name, n+1, err)
			}
		}
		for _, i := range indexes {
			ti := t
			ti.Index = i
			if ti.ID == "" || len(indexes) > 1 {
				// Folded pending tasks have no id of their own yet.
				ti.ID = ti.ref().String()
			}
			tasks = append(tasks, ti)
		}
	}
	return tasks, nil
}

// maxExpand bounds range expansion of one folded index list. wellscan
// submits arrays of at most 1000 tasks (SOURCES.md §2), so a listing that
// expands beyond this is not ours, or is corrupt; refusing it also keeps a
// hostile line from allocating without limit.
const maxExpand = 1 << 16

// parseIndexes reads "7", or with ranges allowed "1-10:2", "3,5,8-9",
// "[2-9%2]".
func parseIndexes(s string, ranges bool) ([]int, error) {
	if !ranges {
		i, err := strconv.Atoi(s)
		if err != nil || i < 0 {
			return nil, fmt.Errorf("task index %q is not a non-negative integer", s)
		}
		return []int{i}, nil
	}
	s = strings.TrimSuffix(strings.TrimPrefix(s, "["), "]")
	if i := strings.IndexByte(s, '%'); i >= 0 {
		s = s[:i]
	}
	var out []int
	for _, part := range strings.Split(s, ",") {
		rng, stepText, hasStep := strings.Cut(part, ":")
		lo, hi, isRange := strings.Cut(rng, "-")
		a, err1 := strconv.Atoi(lo)
		b := a
		var err2 error
		if isRange {
			b, err2 = strconv.Atoi(hi)
		}
		step := 1
		var err3 error
		if hasStep {
			step, err3 = strconv.Atoi(stepText)
		}
		if err1 != nil || err2 != nil || err3 != nil || a < 0 || b < a || step < 1 {
			return nil, fmt.Errorf("task index range %q is not understood", part)
		}
		if len(out)+(b-a)/step+1 > maxExpand {
			return nil, fmt.Errorf("task index range %q expands to more than %d tasks", s, maxExpand)
		}
		for i := a; i <= b; i += step {
			out = append(out, i)
		}
	}
	return out, nil
}

// listHistory runs the profile's bounded accounting query (Slurm: `sacct -X -P
// -n --name=NAME -S SINCE -E now`) and parses it. It returns errNoAccounting
// when the profile has none or the site keeps none.
func (c *Client) listHistory(ctx context.Context, jobName string, since time.Time) ([]TaskState, error) {
	if c.history == nil {
		return nil, errNoAccounting
	}
	if err := validateValue("job name", jobName); err != nil {
		return nil, err
	}
	argv, err := expandArgv(c.profile.History, map[string]any{
		"JobName": jobName,
		// sacct reads -S in the local time zone.
		"Since": since.Local().Format("2006-01-02T15:04:05"),
	}, nil)
	if err != nil {
		return nil, err
	}
	out, err := c.runner.Run(ctx, Cmd{Argv: argv})
	if err != nil {
		return nil, err
	}
	if c.profile.HistoryDisabled != "" && strings.Contains(string(out.Stderr), c.profile.HistoryDisabled) {
		return nil, fmt.Errorf("%w (%s)", errNoAccounting, strings.TrimSpace(string(out.Stderr)))
	}
	if out.ExitCode != 0 {
		return nil, c.commandError(argv, out)
	}
	return c.parseLines(c.history, out.Stdout, jobName, true)
}

// Cancel cancels every job of the scan: by name when the profile can
// (`scancel --me --name=NAME`), otherwise by the ids a status query lists, in
// batches of CancelBatch. It does not wait; see [Client.ConfirmCancelled].
func (c *Client) Cancel(ctx context.Context, jobName string) error {
	if err := validateValue("job name", jobName); err != nil {
		return err
	}
	p := c.profile
	if len(p.Cancel) > 0 {
		argv, err := expandArgv(p.Cancel, map[string]any{"JobName": jobName}, nil)
		if err != nil {
			return err
		}
		out, err := c.runner.Run(ctx, Cmd{Argv: argv})
		if err != nil {
			return err
		}
		if out.ExitCode != 0 {
			return c.commandError(argv, out)
		}
		return nil
	}
	tasks, err := c.listStatus(ctx, jobName)
	if err != nil {
		return err
	}
	var ids []string
	for _, t := range tasks {
		if !Classify(t.State).Terminal() && !slices.Contains(ids, t.Array) {
			ids = append(ids, t.Array)
		}
	}
	return c.cancelIDs(ctx, ids)
}

// cancelIDs cancels the given job ids, at most CancelBatch per command
// (100 by default, SOURCES.md §8).
func (c *Client) cancelIDs(ctx context.Context, ids []string) error {
	batch := c.profile.CancelBatch
	if batch <= 0 {
		batch = 100
	}
	for _, id := range ids {
		if err := validateValue("job id", id); err != nil {
			return err
		}
	}
	for start := 0; start < len(ids); start += batch {
		chunk := ids[start:min(start+batch, len(ids))]
		argv, err := expandArgv(c.profile.CancelByID, nil, chunk)
		if err != nil {
			return err
		}
		out, err := c.runner.Run(ctx, Cmd{Argv: argv})
		if err != nil {
			return err
		}
		if out.ExitCode != 0 {
			return c.commandError(argv, out)
		}
	}
	return nil
}

// ConfirmCancelled polls the status command every `every` until no task of
// jobName is in a live state, or until ctx is done. It returns the last
// listing.
func (c *Client) ConfirmCancelled(ctx context.Context, jobName string, every time.Duration) ([]TaskState, error) {
	for {
		tasks, err := c.listStatus(ctx, jobName)
		if err != nil {
			return nil, err
		}
		live := 0
		for _, t := range tasks {
			if !Classify(t.State).Terminal() {
				live++
			}
		}
		if live == 0 {
			return tasks, nil
		}
		t := time.NewTimer(every)
		select {
		case <-ctx.Done():
			t.Stop()
			return tasks, fmt.Errorf("slurm: %d tasks of %s still live after cancel: %w", live, jobName, ctx.Err())
		case <-t.C:
		}
	}
}
