package server

import (
	"context"
	"sync"
	"time"
)

// deadlineCtx is a request's time limit that costs nothing until someone waits on it: its Done
// channel, the timer that closes it and the link to the parent's cancellation are made at the
// first call of Done. Most answers (a position query, a cached tile) never wait on their
// context, and context.WithTimeout's timer and cancellation link for every request were 3% of
// the CPU time of a position query. Err reports the deadline and the parent's end at any time;
// once it reports one, Done is closed (the context contract).
type deadlineCtx struct {
	context.Context // the parent
	deadline        time.Time

	mu    sync.Mutex
	done  chan struct{}
	err   error
	timer *time.Timer
	stop  func() bool // undoes context.AfterFunc on the parent
}

// closedChan is a Done channel of a context that ended before anyone asked for Done.
var closedChan = func() chan struct{} { c := make(chan struct{}); close(c); return c }()

// withLazyDeadline returns a context ending at now+d or with parent, whichever is first, and its
// release function (call it when the request ends, as for context.WithTimeout's cancel).
func withLazyDeadline(parent context.Context, d time.Duration) (*deadlineCtx, func()) {
	c := &deadlineCtx{Context: parent, deadline: time.Now().Add(d)}
	return c, c.release
}

func (c *deadlineCtx) Deadline() (time.Time, bool) {
	if pd, ok := c.Context.Deadline(); ok && pd.Before(c.deadline) {
		return pd, true
	}
	return c.deadline, true
}

func (c *deadlineCtx) Done() <-chan struct{} {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.done != nil {
		return c.done
	}
	if c.endedLocked() {
		return c.done
	}
	c.done = make(chan struct{})
	c.timer = time.AfterFunc(time.Until(c.deadline), func() { c.end(context.DeadlineExceeded) })
	c.stop = context.AfterFunc(c.Context, func() { c.end(context.Cause(c.Context)) })
	return c.done
}

func (c *deadlineCtx) Err() error {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.endedLocked()
	return c.err
}

// endedLocked notes the end of the context if the parent has ended or the deadline has passed,
// and reports whether it has ended. c.mu is held.
func (c *deadlineCtx) endedLocked() bool {
	if c.err != nil {
		return true
	}
	if err := c.Context.Err(); err != nil {
		c.setErrLocked(err)
	} else if !time.Now().Before(c.deadline) {
		c.setErrLocked(context.DeadlineExceeded)
	}
	return c.err != nil
}

func (c *deadlineCtx) setErrLocked(err error) {
	c.err = err
	if c.done == nil {
		c.done = closedChan
	} else {
		close(c.done)
	}
}

func (c *deadlineCtx) end(err error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.err == nil {
		c.setErrLocked(err)
	}
}

// release stops the timer and the link to the parent, if they were made.
func (c *deadlineCtx) release() {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.timer != nil {
		c.timer.Stop()
		c.stop()
		c.timer = nil
	}
	if c.err == nil {
		c.setErrLocked(context.Canceled) // as a cancelled WithTimeout context reports
	}
}
