package slurm

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// PointTask is the latest listed array task that was given a point.
type PointTask struct {
	Ref   TaskRef
	State TaskState
	Token string
}

// Class returns the class of the task's state.
func (p PointTask) Class() Class { return Classify(p.State.State) }

// jobTokens maps the job ids recorded under scanDir/jobs/*/jobid to their
// submission tokens, for profiles whose status command shows no comment.
func jobTokens(scanDir string) map[string]string {
	out := map[string]string{}
	ents, err := os.ReadDir(filepath.Join(scanDir, JobsDir))
	if err != nil {
		return out
	}
	for _, e := range ents {
		if !e.IsDir() || ValidateValue("token", e.Name()) != nil {
			continue
		}
		b, err := os.ReadFile(filepath.Join(scanDir, JobsDir, e.Name(), JobIDFile))
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

// LatestTasks reads one status listing of a scan: for every point key named
// in the manifest of a listed submission, the latest task that computes it
// (the most recent submission; within one, a live task over a finished
// one). The token comes from the job's comment or, for schedulers that do
// not show one, from the jobs/<token>/jobid files. States the profile does
// not know are skipped. When record is set, each listed job's id is written
// to its jobs/<token>/jobid (a crash between submit and recording the id).
func LatestTasks(scanDir string, tasks []TaskState, record bool) map[string]PointTask {
	var byID map[string]string
	manifests := map[string]*Manifest{}
	latest := map[string]PointTask{}
	for _, t := range tasks {
		if Classify(t.State) == ClassUnknown {
			continue
		}
		tok, ok := t.Token()
		if !ok {
			if byID == nil {
				byID = jobTokens(scanDir)
			}
			tok, ok = byID[t.Array]
		}
		if !ok || ValidateValue("token", tok) != nil {
			continue
		}
		m, seen := manifests[tok]
		if !seen {
			m, _ = ReadManifest(filepath.Join(scanDir, JobsDir, tok))
			manifests[tok] = m
			if m != nil && record {
				_ = WriteJobFile(filepath.Join(scanDir, JobsDir, tok), JobIDFile, []byte(t.Array+"\n"))
			}
		}
		if m == nil {
			continue
		}
		idx := []int{t.Index}
		if t.Index == NoTask {
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
			pt := PointTask{Ref: TaskRef{Array: t.Array, Index: i}, State: t, Token: tok}
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
