package hf

// DefaultSCFOptions returns the SCF settings the zero SCFOptions stands
// for (convergence thresholds, iteration limit, DIIS), as the report's
// conditions state them.
func DefaultSCFOptions() SCFOptions {
	o, _ := (&SCFOptions{}).withDefaults()
	return o
}
