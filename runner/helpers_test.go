package runner_test

import (
	"encoding/json"
	"strconv"
)

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }

func itoa(i int) string { return strconv.Itoa(i) }
