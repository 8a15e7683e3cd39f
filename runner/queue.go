package runner

import (
	"context"
	"fmt"
)

// noticeBuffer is how many queue notices may wait for the round loop; a
// notice beyond it is dropped rather than block the queue (notices are
// messages for the user, a few per outage).
const noticeBuffer = 16

// queueRun is the queue of one run once started: the round loop sends
// tasks on in, takes completions from out and notices from notices; the
// queue's error arrives on errc when it returns.
type queueRun struct {
	in      chan Task
	out     chan Completion
	notices chan string
	errc    chan error
}

// checkQueue reports a queue that is neither a [Pool] nor a [Batch].
func checkQueue(q Queue) error {
	switch q.(type) {
	case Pool, Batch:
		return nil
	case nil:
		return fmt.Errorf("runner: no queue")
	}
	return fmt.Errorf("runner: queue %s is neither a runner.Pool nor a runner.Batch", q.Name())
}

// startQueue runs r's queue in a goroutine of its own: a Pool with r's
// in-process worker, a Batch with the run's detach setting and a notice
// channel.
func (r *scanRun) startQueue(ctx context.Context) (*queueRun, error) {
	if err := checkQueue(r.Queue); err != nil {
		return nil, err
	}
	q := &queueRun{
		in: make(chan Task),
		// Unbuffered: a worker cannot take a new task before its
		// completion is ingested, so every task is built knowing every
		// finished point (the continuation guess picks the nearest done
		// neighbour).
		out:     make(chan Completion),
		notices: make(chan string, noticeBuffer),
		errc:    make(chan error, 1),
	}
	// The queue's context also ends when the scan directory moves away
	// (moved.go).
	qctx := r.home.context(ctx)
	switch queue := r.Queue.(type) {
	case Pool:
		go func() { q.errc <- queue.Run(qctx, r.work, q.in, q.out) }()
	case Batch:
		opts := BatchOptions{Detach: r.Detach, Notice: q.notice}
		go func() { q.errc <- queue.Submit(qctx, q.in, q.out, opts) }()
	}
	return q, nil
}

// notice is the Batch's BatchOptions.Notice: it never blocks the queue.
func (q *queueRun) notice(msg string) {
	select {
	case q.notices <- msg:
	default:
	}
}

// stopQueue closes the queue's input and ingests the completions (and
// passes on the notices) still coming until the queue returns; it
// returns the queue's error.
func (r *scanRun) stopQueue(q *queueRun) error {
	close(q.in)
	for {
		select {
		case c := <-q.out:
			r.ingest(c)
		case msg := <-q.notices:
			r.notice(msg)
		case err := <-q.errc:
			for {
				select {
				case c := <-q.out:
					r.ingest(c)
				case msg := <-q.notices:
					r.notice(msg)
				default:
					return err
				}
			}
		}
	}
}

// notice passes a message of the queue to the observer as an EventNotice;
// the store's log does not keep it.
func (r *scanRun) notice(msg string) {
	if r.OnEvent == nil {
		return
	}
	pr := r.progress()
	r.OnEvent(Event{Time: r.Now(), Kind: EventNotice, Round: r.round, Message: msg, Progress: &pr})
}
