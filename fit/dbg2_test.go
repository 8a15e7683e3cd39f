package fit
import ("testing";"context")
func TestDbgK2(t *testing.T){
	const d, a = 0.1, 2.0
	v := func(r float64) float64 { return -2 * d * (a/r - a*a/(2*r*r)) }
	r := unevenGrid(0.9, 1.2, 6, 12, 120, 0.04, 0.25)
	e := sampleAt(v, r)
	for _, fits := range [][]*MorseFit{nil} {
	lp,_,_ := newLevelPotential(context.Background(), r, e, fits...)
	w := findWells(e, 1e-6)[0]
	g,_ := solveWell(context.Background(), lp, r, e, w, 1, e[w.hi], Distance)
	for _, k := range []int{0,5,12} {
		t.Log(k, (g.e[k]-g.vmin)*HartreeInCm1, (g.thin[k]-g.vminThin)*HartreeInCm1, (g.grid[k]-g.vmin)*HartreeInCm1)
	}}
}
