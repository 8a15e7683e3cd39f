package slurm

import (
	"reflect"
	"testing"
)

// FuzzParseManifest: never panics; whatever parses marshals back to text
// that parses to the same manifest.
func FuzzParseManifest(f *testing.F) {
	f.Add([]byte("# wellscan tasks v1\n0\tr=1.12800\tr=1.13000\n1\tr1=0.95000,theta=104.500\n"))
	f.Add([]byte("# wellscan tasks v1\n1\ta\n"))
	f.Add([]byte("# wellscan tasks v1\n0\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := parseManifest("fuzz", data)
		if err != nil {
			return
		}
		if len(m.Tasks) == 0 {
			return
		}
		text, err := m.marshal()
		if err != nil {
			t.Fatalf("parsed manifest does not marshal: %v", err)
		}
		m2, err := parseManifest("fuzz", text)
		if err != nil || !reflect.DeepEqual(m, m2) {
			t.Fatalf("round trip: %+v, %v; want %+v", m2, err, m)
		}
	})
}

// FuzzParseStatus: every preset's status and history parsers either fail
// with an error or return tasks with an array id.
func FuzzParseStatus(f *testing.F) {
	f.Add([]byte("8_0|9|8|0|COMPLETED|None|ws:x\n8_[2-4%2]|8|8|[2-4%2]|PENDING|JobArrayTaskLimit\n"))
	f.Add([]byte("12|12_0|COMPLETED|0:0\n14|14|CANCELLED by 0|0:0\n"))
	f.Add([]byte("123[0].server  ws-1a2b3c4d-0  alice  0 R batch\n8812|1|DONE\n"))
	f.Add([]byte("    551 0.00000 ws-1a2b3c4 alice        qw    05/01/2026 09:59:58                                    1 3-5:1\n"))
	var clients []*Client
	for _, p := range presets() {
		c, err := NewClient(p, &fakeRunner{})
		if err != nil {
			f.Fatal(err)
		}
		clients = append(clients, c)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, c := range clients {
			for _, parse := range []func([]byte, string) ([]TaskState, error){c.parseStatus, c.parseHistory} {
				tasks, err := parse(data, "ws-1a2b3c4d")
				if err != nil {
					continue
				}
				for _, task := range tasks {
					if task.Array == "" {
						t.Fatalf("%s: task without array id from %q", c.Profile().Name, data)
					}
				}
			}
		}
	})
}
