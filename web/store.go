package web

import (
	"crypto/rand"
	"encoding/hex"
	"sync"
	"time"
)

// Download store limits: files live for storeLife; the oldest are dropped
// when the total passes storeBytes.
const (
	storeLife  = time.Hour
	storeBytes = 256 << 20
)

// item is one file offered for download.
type item struct {
	name        string
	contentType string
	data        []byte
	// make renders the file on download instead (the PNG map, slow to
	// draw and seldom wanted).
	make     func() ([]byte, error)
	once     bool // removed at the first download (a blinding key)
	viewable bool // may be shown inline (the analysis report)
	expires  time.Time
	added    int64
}

// store keeps the files a page offers for download, in memory only, under
// unguessable names; it is the only state the server keeps between
// requests.
type store struct {
	mu    sync.Mutex
	now   func() time.Time
	items map[string]*item
	bytes int
	seq   int64
}

func newStore(now func() time.Time) *store {
	return &store{now: now, items: map[string]*item{}}
}

// put stores it and returns its id.
func (s *store) put(it item) string {
	var b [16]byte
	if _, err := rand.Read(b[:]); err != nil {
		panic("web: no randomness for a download id: " + err.Error())
	}
	id := hex.EncodeToString(b[:])
	s.mu.Lock()
	defer s.mu.Unlock()
	now := s.now()
	for k, v := range s.items {
		if now.After(v.expires) {
			s.drop(k)
		}
	}
	for s.bytes+len(it.data) > storeBytes && len(s.items) > 0 {
		oldest := ""
		for k, v := range s.items {
			if oldest == "" || v.added < s.items[oldest].added {
				oldest = k
			}
		}
		s.drop(oldest)
	}
	s.seq++
	it.expires, it.added = now.Add(storeLife), s.seq
	s.items[id] = &it
	s.bytes += len(it.data)
	return id
}

func (s *store) drop(id string) {
	s.bytes -= len(s.items[id].data)
	delete(s.items, id)
}

// take returns the item with id; an item marked once is removed.
func (s *store) take(id string) (item, bool) {
	s.mu.Lock()
	defer s.mu.Unlock()
	it, ok := s.items[id]
	if !ok || s.now().After(it.expires) {
		if ok {
			s.drop(id)
		}
		return item{}, false
	}
	if it.once {
		s.drop(id)
	}
	return *it, true
}
