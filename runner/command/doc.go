// Package command runs an external program for each point of a scan: it
// renders the point's input from a template, runs the program in the
// point's own directory under a timeout, and reads the energy back from its
// output with a [parsers.Extractor].
//
// # Overview
//
// A [Config] says which template to render ([Config.Render], Go
// text/template with missingkey=error and the helpers documented on
// [Point]), which file name the input gets, which program to start (an
// argument list, never a shell string; or, by explicit opt-in, one fixed
// script run with /bin/sh that receives the point's values as WELLSCAN_*
// environment variables and files), the timeout, the files the program
// must leave behind, and how to find the energy. [Config.Run] does one
// point and returns an [Outcome] whose class ([runner.FailureClass]) says
// what went wrong, if anything; the backend marks the failures that a
// retry cannot mend as permanent.
//
// # Files
//
// Each point runs in its own directory (Job.Dir, points/<key>/ in a scan),
// which keeps, after the run: the rendered input, point.xyz (the geometry
// in Å), stdout, stderr, and exit-status (exit code, signal, failure class,
// elapsed time). Outputs listed in the config, and the energy file, are
// removed before the program starts so that a file left by an earlier
// attempt never passes for a new result.
//
// # Units
//
// Job positions are in bohr; coordinate values are in the spec's units
// (Job.CoordUnits says which). Templates choose Å or bohr explicitly.
// Energies are returned in hartree.
//
// # Process control
//
// The program starts in a process group of its own. On timeout or when
// the context is cancelled the whole group gets SIGTERM, then SIGKILL after
// Config.KillGrace; after any run, what is left of the group is killed
// too, so that no background child outlives its point. A program that
// leaves its process group on purpose (setsid) escapes this.
//
// # Concurrency
//
// A Config is plain data and may be shared by goroutines running different
// points; two runs must not share a directory.
package command
