package slurm

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// pointTask is the latest listed array task that was given a point.
type pointTask struct {
	Ref   taskRef
	State TaskState
	Token string
}

// Class returns the class of the task's state.
func (p pointTask) Class() Class { return Classify(p.State.State) }

// jobTokens maps the job ids recorded under scanDir/jobs/*/jobid to their
// submission tokens, for profiles whose status command shows no comment.
func jobTokens(scanDir string) map[string]string {
	out := map[string]string{}
	ents, err := os.ReadDir(filepath.Join(scanDir, JobsDir))
	if err != nil {
		return out
	}
	for _, e := range ents {
		if !e.IsDir() || validateValue("token", e.Name()) != nil {
			continue
		}
		b, err := os.ReadFile(filepath.Join(scanDir, JobsDir, e.Name(), jobIDFile))
		if err != nil {
			continue
		}
		if id := strings.TrimSpace(string(b)); id != "" {
			out[id] = e.Name()
		}
	}
	return out
}

// later reports whether array id a was submitted after b: numerically when
// both are numbers (job ids grow), else as text.
func later(a, b string) bool {
	x, errA := strconv.ParseUint(a, 10, 64)
	y, errB := strconv.ParseUint(b, 10, 64)
	if errA == nil && errB == nil {
		return x > y
	}
	return a > b
}

// latestTasks reads one status listing of a scan: for every point key named
// in the manifest of a listed submission, the latest task that computes it
// (the most recent submission; within one, a live task over a finished
// one). The token comes from the job's comment or, for schedulers that do
// not show one, from the jobs/<token>/jobid files. States the profile does
// not know are skipped. When record is set, each listed job's id is written
// to its jobs/<token>/jobid (a crash between submit and recording the id).
func latestTasks(scanDir string, tasks []TaskState, record bool) map[string]pointTask {
	var byID map[string]string
	manifests := map[string]*Manifest{}
	latest := map[string]pointTask{}
	for _, t := range tasks {
		if Classify(t.State) == classUnknown {
			continue
		}
		tok, ok := t.token()
		if !ok {
			if byID == nil {
				byID = jobTokens(scanDir)
			}
			tok, ok = byID[t.Array]
		}
		if !ok || validateValue("token", tok) != nil {
			continue
		}
		m, seen := manifests[tok]
		if !seen {
			m, _ = readManifest(filepath.Join(scanDir, JobsDir, tok))
			manifests[tok] = m
			if m != nil && record {
				_ = writeJobFile(filepath.Join(scanDir, JobsDir, tok), jobIDFile, []byte(t.Array+"\n"))
			}
		}
		if m == nil {
			continue
		}
		idx := []int{t.Index}
		if t.Index == noTask {
			idx = nil
			for i := range m.Tasks {
				idx = append(idx, m.First+i)
			}
		}
		for _, i := range idx {
			keys, err := m.Task(i)
			if err != nil {
				continue
			}
			pt := pointTask{Ref: taskRef{Array: t.Array, Index: i}, State: t, Token: tok}
			pt.State.Index = i
			for _, k := range keys {
				cur, ok := latest[k]
				switch {
				case !ok, later(t.Array, cur.Ref.Array):
				case t.Array == cur.Ref.Array && cur.Class().Terminal() && !pt.Class().Terminal():
				default:
					continue
				}
				latest[k] = pt
			}
		}
	}
	return latest
}
