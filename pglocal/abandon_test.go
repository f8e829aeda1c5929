package pglocal

// abandon makes c behave as if its owning process had died without stopping the server and
// its watchdog had failed too: the lock is given up and the server left running. c is
// done with afterwards (Stop returns nil and does nothing).
func (c *Cluster) abandon() {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.wd.disarm()
	c.wd = nil
	c.lock.release()
	c.stopped = true
}
