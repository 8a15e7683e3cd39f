package runner_test

import (
	"encoding/json"
	"math"
	"strconv"
)

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }

func itoa(i int) string { return strconv.Itoa(i) }

func sq(x float64) float64  { return x * x }
func exp(x float64) float64 { return math.Exp(x) }
func abs(x float64) float64 { return math.Abs(x) }
