package bacnet

import (
	"context"
	"errors"
	"fmt"
	"net"
	"time"

	"risewatch/collector/bacnet/wire"
)

var errClosedConn = net.ErrClosed

// register sends Register-Foreign-Device to the BBMD and waits for its
// BVLC-Result (ASHRAE 135 Annex J.5.2), retrying per the APDU timeout.
func (c *Client) register(ctx context.Context) error {
	ttl := uint16(min(c.opts.TTL/time.Second, 65535))
	f := wire.AppendRegisterForeignDevice(nil, ttl)
	for attempt := 0; attempt <= c.opts.Retries; attempt++ {
		if err := c.send(c.bbmd, f); err != nil {
			return fmt.Errorf("bacnet: register with BBMD %s: %w", c.bbmd, err)
		}
		t := time.NewTimer(c.opts.Timeout)
		select {
		case code := <-c.fdResult:
			t.Stop()
			if code != wire.BVLCResultSuccess {
				c.registered.Store(false)
				return fmt.Errorf("bacnet: BBMD %s refused foreign-device registration (result 0x%04x)", c.bbmd, code)
			}
			c.registered.Store(true)
			return nil
		case <-t.C:
		case <-ctx.Done():
			t.Stop()
			return ctx.Err()
		case <-c.closed:
			t.Stop()
			return ErrClosed
		}
	}
	c.registered.Store(false)
	return fmt.Errorf("bacnet: BBMD %s did not answer foreign-device registration: %w", c.bbmd, ErrTimeout)
}

// Registered reports whether the last foreign-device registration succeeded.
func (c *Client) Registered() bool { return c.registered.Load() }

// reregister renews the registration at half the TTL, so one lost renewal
// still leaves time before the BBMD drops the entry.
func (c *Client) reregister() {
	defer c.wg.Done()
	every := c.opts.TTL / 2
	for {
		select {
		case <-time.After(every):
		case <-c.closed:
			return
		}
		ctx, cancel := context.WithTimeout(context.Background(), every)
		err := c.register(ctx)
		cancel()
		if err != nil && !errors.Is(err, ErrClosed) {
			c.opts.Logger.Warn("bacnet: foreign-device re-registration failed", "bbmd", c.bbmd, "err", err)
		}
	}
}
