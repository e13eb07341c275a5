package web

import (
	"net/http"
	"testing"
)

// The time one request of each page takes, from form to rendered answer.

func BenchmarkSizePage(b *testing.B) {
	s := newServer(b, Config{})
	v := sizeValues("groups", "4", "f", "0.25", "power", "0.9")
	for b.Loop() {
		if rec := post(b, s, "/size", v); rec.Code != http.StatusOK {
			b.Fatal(rec.Code)
		}
	}
}

func BenchmarkLayoutPage(b *testing.B) {
	s := newServer(b, Config{})
	v := layoutValues("blocks", "6", "factor", "feed=F0,F1,F2,F3", "grid", "2x2")
	for b.Loop() {
		if rec := post(b, s, "/layout", v); rec.Code != http.StatusOK {
			b.Fatal(rec.Code)
		}
	}
}

func BenchmarkCheckPage(b *testing.B) {
	s := newServer(b, Config{})
	wb := filledWorkbook(b, s)
	for b.Loop() {
		if rec := postUpload(b, s, checkValues(), part{"file", "filled.xlsx", wb}); rec.Code != http.StatusOK {
			b.Fatal(rec.Code)
		}
	}
}
