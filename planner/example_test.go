package planner_test

import (
	"fmt"

	"wellscan/planner"
)

// The kinetic metric of a diatomic bond scan is the reduced mass
// m_C m_O/(m_C + m_O) (AME2020 masses: 12 and 15.99491461926 amu).
func ExampleSpec_KineticMetric() {
	spec, err := planner.Decode([]byte(`
[molecule]
geometry = """
C 0 0 0
O 0 0 1.13
"""
[[scan]]
bond = [1, 2]
from = 1.0
to = 1.3
step = 0.05
[engine]
kind = "model"
[[engine.model.term]]
shape = "harmonic"
force = 1.2
center = 2.13
`), "scan.toml")
	if err != nil {
		fmt.Println(err)
		return
	}
	g, err := spec.KineticMetric(spec.PointAt([]float64{1.13}))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("μ = %.6f amu\n", g[0][0])
	// Output:
	// μ = 6.856209 amu
}
