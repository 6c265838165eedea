package server

import (
	"crypto/rand"
	"encoding/hex"
	"sync"
	"time"
)

// tokenStash carries a newly created API token from the POST that made it
// to the page its 303 redirect shows, once: the redirect URL holds only a
// random handle, bound to the user, valid for a few minutes and deleted
// when read, so a refresh neither resubmits the form (a second token) nor
// shows the secret again. Kept in memory: a restart in between loses the
// display, never the token (it can be revoked and made anew).
type tokenStash struct {
	mu      sync.Mutex
	entries map[string]stashedToken
}

type stashedToken struct {
	userID      int64
	token, name string
	expires     time.Time
}

// stashTTL is how long a created token waits to be shown.
const stashTTL = 5 * time.Minute

func newTokenStash() *tokenStash { return &tokenStash{entries: map[string]stashedToken{}} }

// put keeps tok for userID and returns its handle.
func (t *tokenStash) put(userID int64, tok, name string, now time.Time) string {
	b := make([]byte, 16)
	if _, err := rand.Read(b); err != nil {
		panic(err)
	}
	h := hex.EncodeToString(b)
	t.mu.Lock()
	defer t.mu.Unlock()
	for k, e := range t.entries {
		if now.After(e.expires) {
			delete(t.entries, k)
		}
	}
	t.entries[h] = stashedToken{userID: userID, token: tok, name: name, expires: now.Add(stashTTL)}
	return h
}

// take returns and forgets the token of handle h if it belongs to userID
// and has not expired.
func (t *tokenStash) take(h string, userID int64, now time.Time) (tok, name string, ok bool) {
	t.mu.Lock()
	defer t.mu.Unlock()
	e, found := t.entries[h]
	if !found || e.userID != userID {
		return "", "", false
	}
	delete(t.entries, h)
	if now.After(e.expires) {
		return "", "", false
	}
	return e.token, e.name, true
}
