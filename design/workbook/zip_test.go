package workbook

import (
	"archive/zip"
	"bytes"
	"compress/flate"
	"fmt"
	"io"
	"math/rand/v2"
	"os/exec"
	"path/filepath"
	"testing"
)

// segmentedInput is text like a worksheet's (repetitive, compressible)
// with stretches of random bytes, n bytes long.
func segmentedInput(n int, seed uint64) []byte {
	r := rand.New(rand.NewPCG(seed, 1))
	var b bytes.Buffer
	for b.Len() < n {
		if r.IntN(10) == 0 {
			for k := r.IntN(500); k > 0; k-- {
				b.WriteByte(byte(r.Uint32()))
			}
			continue
		}
		fmt.Fprintf(&b, `<row r="%d"><c r="A%d" s="3"><v>%d</v></c></row>`, r.IntN(1e5), r.IntN(1e5), r.IntN(1e6))
	}
	return b.Bytes()[:n]
}

// TestSegmentedDeflate: the segments joined are one deflate stream that
// inflates to the input, for inputs shorter than a segment, a whole number
// of segments and more, written in pieces of every size, compressed one or
// several at a time. Python's zlib, a second inflater, reads the streams
// of several segments the same way when it is installed.
func TestSegmentedDeflate(t *testing.T) {
	py, pyErr := exec.LookPath("python3")
	const size = 4096
	pool := &flatePool{}
	for _, n := range []int{0, 1, 100, size - 1, size, 3 * size, 10*size + 17, 200_000} {
		for _, workers := range []int{1, 2, 5} {
			for _, piece := range []int{1, 7, 1000, 1 << 20} {
				if n > 20_000 && piece < 1000 {
					continue // slow, and covered by the shorter inputs
				}
				in := segmentedInput(n, uint64(n+workers))
				var z bytes.Buffer
				s := newSegmented(&z, pool, workers, size)
				for p := in; len(p) > 0; {
					k := min(piece, len(p))
					if w, err := s.Write(p[:k]); err != nil || w != k {
						t.Fatalf("write: %d of %d, %v", w, k, err)
					}
					p = p[k:]
				}
				if err := s.Close(); err != nil {
					t.Fatal(err)
				}
				got, err := io.ReadAll(flate.NewReader(bytes.NewReader(z.Bytes())))
				if err != nil || !bytes.Equal(got, in) {
					t.Fatalf("%d bytes, %d at once, pieces of %d: inflated to %d bytes (%v)", n, workers, piece, len(got), err)
				}
				if pyErr == nil && piece == 1000 && workers == 2 && n > 3*size {
					cmd := exec.Command(py, "-c", "import sys, zlib; sys.stdout.buffer.write(zlib.decompress(sys.stdin.buffer.read(), -15))")
					cmd.Stdin = bytes.NewReader(z.Bytes())
					out, err := cmd.Output()
					if err != nil || !bytes.Equal(out, in) {
						t.Fatalf("%d bytes: Python's zlib inflated %d bytes (%v)", n, len(out), err)
					}
				}
			}
		}
	}
}

// TestSegmentedDeflateError: a failing destination stops the stream with
// its error.
func TestSegmentedDeflateError(t *testing.T) {
	s := newSegmented(failWriter{}, &flatePool{}, 2, 1000)
	in := segmentedInput(10_000, 3)
	_, werr := s.Write(in)
	cerr := s.Close()
	if werr != errFail && cerr != errFail {
		t.Errorf("write %v, close %v: want %v", werr, cerr, errFail)
	}
}

var errFail = fmt.Errorf("disk full")

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errFail }

// TestLargeWorkbookParts: a workbook of 6,000 units, whose Entry and Map
// parts take several segments each, is a valid zip archive that reads back
// without an error; LibreOffice opens it and saves it again (when
// installed), and the copy reads back the same.
func TestLargeWorkbookParts(t *testing.T) {
	l := unicodeLayout(t, 1500)
	dir := t.TempDir()
	path := filepath.Join(dir, "large.xlsx")
	if err := Write(path, l, meta, false); err != nil {
		t.Fatal(err)
	}
	zr, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	big := 0
	for _, zf := range zr.File {
		if zf.UncompressedSize64 > segmentSize {
			big++
		}
		rc, err := zf.Open()
		if err != nil {
			t.Fatal(err)
		}
		if _, err := io.Copy(io.Discard, rc); err != nil { // checks the CRC too
			t.Fatalf("%s: %v", zf.Name, err)
		}
		rc.Close()
	}
	zr.Close()
	if big < 2 {
		t.Fatalf("%d parts over one segment: the test does not reach the parallel path", big)
	}
	fl, err := Read(path, ReadOptions{})
	// Nothing is filled in: only the warnings of missing values.
	if err != nil || fl.Errors() != 0 || len(fl.Layout.Units) != len(l.Units) {
		t.Fatalf("read back: %v, %d units, problems %v", err, len(fl.Layout.Units), fl.Problems)
	}
	lo := needLibreOffice(t)
	out := filepath.Join(dir, "resaved")
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+t.TempDir(), "--convert-to", "xlsx", "--outdir", out, path)
	if b, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("libreoffice: %v\n%s", err, b)
	}
	got, err := Read(filepath.Join(out, "large.xlsx"), ReadOptions{})
	if err != nil || fmt.Sprint(got.Problems) != fmt.Sprint(fl.Problems) {
		t.Fatalf("after LibreOffice: %v %v", err, got.Problems)
	}
	for i, u := range got.Layout.Units {
		if u != fl.Layout.Units[i] {
			t.Fatalf("unit %d after LibreOffice: %+v, before %+v", i, u, fl.Layout.Units[i])
		}
	}
	if len(got.Layout.Units) != len(l.Units) {
		t.Errorf("%d units after LibreOffice, %d before", len(got.Layout.Units), len(l.Units))
	}
}
