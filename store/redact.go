package store

import "net/url"

// Redact returns a database URL with any password replaced by "xxxxx", for logs and
// error messages. A string that is not a URL (a keyword/value DSN) is returned as
// "(database DSN)" unless it holds no password.
func Redact(dsn string) string {
	u, err := url.Parse(dsn)
	if err != nil || u.Scheme == "" {
		return "(database DSN)"
	}
	if u.User != nil {
		if _, has := u.User.Password(); has {
			u.User = url.UserPassword(u.User.Username(), "xxxxx")
		}
	}
	return u.String()
}
