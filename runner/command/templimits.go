package command

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"strconv"
	"text/template"
	"text/template/parse"
	"time"
)

// Limits on rendering one input: a template is a small program, and a
// mistaken one ({{range 100000000000}}) must fail fast instead of
// filling the disk or hanging plan and run.
const (
	// MaxInputBytes bounds a rendered input (16 MiB; an input for one
	// point is kilobytes).
	MaxInputBytes = 16 << 20
	// MaxLiteralIterations bounds the iterations of ranges over integer
	// constants, nested ones multiplied: such a loop runs whatever the
	// data, and an empty one writes nothing that the byte cap could stop.
	MaxLiteralIterations = 1_000_000
	// DefaultRenderTimeout bounds one render when the caller gives no
	// deadline (plan).
	DefaultRenderTimeout = 10 * time.Second
)

// ErrRenderLimit is matched by errors of a render stopped by a limit.
var ErrRenderLimit = errors.New("command: template limit")

// checkLiteralRanges walks the template's trees for ranges over integer
// constants whose nested product exceeds MaxLiteralIterations.
func checkLiteralRanges(t *template.Template) error {
	for _, tt := range t.Templates() {
		if tt.Tree == nil || tt.Root == nil {
			continue
		}
		if err := walkRanges(tt.Tree, tt.Root, 1); err != nil {
			return err
		}
	}
	return nil
}

func walkRanges(tree *parse.Tree, n parse.Node, product float64) error {
	switch n := n.(type) {
	case *parse.ListNode:
		if n == nil {
			return nil
		}
		for _, c := range n.Nodes {
			if err := walkRanges(tree, c, product); err != nil {
				return err
			}
		}
	case *parse.RangeNode:
		p := product
		if v, ok := literalCount(n.Pipe); ok {
			p *= v
			if p > MaxLiteralIterations {
				loc, _ := tree.ErrorContext(n)
				return fmt.Errorf("%w: %s: a range over %s runs %.3g times (nested ranges multiplied), more than the %d a template may loop over a constant",
					ErrRenderLimit, loc, n.Pipe, p, MaxLiteralIterations)
			}
		}
		if err := walkRanges(tree, n.List, p); err != nil {
			return err
		}
		return walkRanges(tree, n.ElseList, product)
	case *parse.IfNode:
		if err := walkRanges(tree, n.List, product); err != nil {
			return err
		}
		return walkRanges(tree, n.ElseList, product)
	case *parse.WithNode:
		if err := walkRanges(tree, n.List, product); err != nil {
			return err
		}
		return walkRanges(tree, n.ElseList, product)
	}
	return nil
}

// literalCount returns the integer constant a range pipeline iterates
// over ({{range 5}}, {{range $i := 5}}).
func literalCount(p *parse.PipeNode) (float64, bool) {
	if p == nil || len(p.Cmds) != 1 || len(p.Cmds[0].Args) != 1 {
		return 0, false
	}
	num, ok := p.Cmds[0].Args[0].(*parse.NumberNode)
	if !ok {
		return 0, false
	}
	if num.IsInt {
		return float64(num.Int64), true
	}
	if v, err := strconv.ParseFloat(num.Text, 64); err == nil {
		return v, true
	}
	return 0, false
}

// cappedBuffer is the render's output: it refuses to grow past max bytes
// and stops writing once ctx is done.
type cappedBuffer struct {
	ctx context.Context
	buf bytes.Buffer
	max int
}

func (c *cappedBuffer) Write(p []byte) (int, error) {
	if err := c.ctx.Err(); err != nil {
		return 0, err
	}
	if c.buf.Len()+len(p) > c.max {
		return 0, fmt.Errorf("%w: the rendered input grew past %d bytes", ErrRenderLimit, c.max)
	}
	return c.buf.Write(p)
}

// execute runs tmpl with a byte cap, in its own goroutine so that a
// cancelled or timed-out context returns at once with an error. A
// template that loops without writing cannot be stopped from outside;
// checkLiteralRanges refuses the constant loops that could do that, and
// loops over the data are bounded by it (atoms, coordinates).
func execute(ctx context.Context, tmpl *template.Template, data any) ([]byte, error) {
	if _, ok := ctx.Deadline(); !ok {
		var cancel context.CancelFunc
		ctx, cancel = context.WithTimeout(ctx, DefaultRenderTimeout)
		defer cancel()
	}
	out := &cappedBuffer{ctx: ctx, max: MaxInputBytes}
	done := make(chan error, 1)
	go func() { done <- tmpl.Execute(out, data) }()
	select {
	case err := <-done:
		if err != nil {
			return nil, err
		}
		return out.buf.Bytes(), nil
	case <-ctx.Done():
		if errors.Is(ctx.Err(), context.DeadlineExceeded) {
			return nil, fmt.Errorf("%w: rendering took longer than allowed: %w", ErrRenderLimit, ctx.Err())
		}
		return nil, ctx.Err()
	}
}
