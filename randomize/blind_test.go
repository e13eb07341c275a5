package randomize

import (
	"bytes"
	"crypto/hmac"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"slices"
	"testing"

	"github.com/allotproject/allot/design"
)

// blindPlan has 6 treatments in 4 blocks: 720^3 ways to group the units
// by treatment up to names, so a wrong seed fits the code groups of a
// sealed layout with probability below 3·10^-9.
func blindPlan(mode string, seed uint64) design.Plan {
	p := plan(design.RCBD, 4, []int{1, 1, 1, 1, 1, 1}, design.Factor{Name: "dose", Levels: []string{"d0", "d1", "d2", "d3", "d4", "d5"}})
	p.Blind, p.BlindMode, p.Seed = true, mode, seed
	return p
}

// TestSameSeedOtherCodes: two blind runs with the same seed give the same
// allocation and different codes (each run draws its own secret).
func TestSameSeedOtherCodes(t *testing.T) {
	for _, mode := range []string{design.BlindTreatment, design.BlindUnit} {
		t.Run(mode, func(t *testing.T) {
			a, err := Assign(blindPlan(mode, 11))
			if err != nil {
				t.Fatal(err)
			}
			b, err := Assign(blindPlan(mode, 11))
			if err != nil {
				t.Fatal(err)
			}
			if bytes.Equal(a.Secret, b.Secret) || len(a.Secret) != SecretBytes {
				t.Fatalf("secrets %x %x", a.Secret, b.Secret)
			}
			same := 0
			for i := range a.Units {
				if a.Units[i].Treatment != b.Units[i].Treatment || a.Units[i].ID != b.Units[i].ID {
					t.Fatalf("unit %d: allocation differs between runs with the same seed", i)
				}
				if a.Units[i].Code == b.Units[i].Code {
					same++
				}
			}
			if same == len(a.Units) {
				t.Errorf("codes identical in two runs: %v", a.Codes)
			}
			// The allocation is that of the plan without blinding.
			p := blindPlan(mode, 11)
			p.Blind, p.BlindMode = false, ""
			open, _ := Assign(p)
			for i := range open.Units {
				if open.Units[i].Treatment != a.Units[i].Treatment {
					t.Fatalf("blinding changed the allocation at unit %d", i)
				}
			}
		})
	}
}

// TestSeedSearchFindsNothing plays the attacker: with the workbook's sealed
// layout (plan without seed, each unit's code), search seeds 0..10^6 for
// (a) codes drawn from the seed, as before secrets, and (b) an allocation
// whose treatment groups match the groups of units sharing a code. Neither
// finds the seed of a layout whose seed was drawn by allot.
func TestSeedSearchFindsNothing(t *testing.T) {
	if testing.Short() {
		t.Skip("seed search over 10^6 seeds (about 2 s)")
	}
	seed, err := NewSeed()
	if err != nil {
		t.Fatal(err)
	}
	for seed <= 1_000_000 {
		seed, _ = NewSeed()
	}
	l, err := Assign(blindPlan(design.BlindTreatment, seed))
	if err != nil {
		t.Fatal(err)
	}
	sealed := l.Sealed()
	if sealed.Plan.Seed != 0 || sealed.Plan.Fingerprint() != l.Plan.Fingerprint() {
		t.Fatal("the sealed plan keeps its seed, or its fingerprint depends on it")
	}
	hits := seedSearch(sealed, 1_000_000)
	if len(hits) > 0 {
		t.Errorf("seed search recovered candidate seeds %v", hits)
	}
}

// TestGivenSmallSeedIsFound shows why layout warns about --seed with
// --blind treatment: a guessable seed is found from the code groups.
func TestGivenSmallSeedIsFound(t *testing.T) {
	l, err := Assign(blindPlan(design.BlindTreatment, 4242))
	if err != nil {
		t.Fatal(err)
	}
	if hits := seedSearch(l.Sealed(), 10_000); !slices.Equal(hits, []uint64{4242}) {
		t.Errorf("search of 0..10^4 found %v, not 4242", hits)
	}
	// With one code per unit the groups say nothing: every seed fits, and
	// the search cannot tell the seed used.
	u, _ := Assign(blindPlan(design.BlindUnit, 4242))
	if hits := seedSearch(u.Sealed(), 1000); len(hits) != 1001 {
		t.Errorf("per-unit codes: %d of 1001 seeds fit, want all", len(hits))
	}
}

// seedSearch returns the seeds in 0..n whose codes (step 6 without a
// secret) appear in s, or whose allocation groups units as s's codes do.
func seedSearch(s design.Layout, n uint64) []uint64 {
	p := s.Plan
	nt := len(p.Reps)
	visible := map[string]bool{}
	for _, u := range s.Units {
		visible[u.Code] = true
	}
	var hits []uint64
	slots := make([]int, 0, p.BlockSize())
	for seed := uint64(0); seed <= n; seed++ {
		all := true
		for _, c := range Codes(seed, nt) {
			all = all && visible[c]
		}
		if all && len(visible) == nt {
			hits = append(hits, seed)
		}
		// Partition attack: units that share a code must share a
		// treatment under the candidate seed's allocation.
		treatOf := make(map[string]int, len(visible))
		ok := true
		i := 0
		for b := 1; b <= p.Blocks && ok; b++ {
			slots = slots[:0]
			for t, r := range p.Reps {
				for k := 0; k < r; k++ {
					slots = append(slots, t)
				}
			}
			Shuffle(Stream(seed, uint64(b)), slots)
			for _, t := range slots {
				c := s.Units[i].Code
				i++
				if t0, seen := treatOf[c]; !seen {
					treatOf[c] = t
				} else if t0 != t {
					ok = false
					break
				}
			}
		}
		if ok && (len(hits) == 0 || hits[len(hits)-1] != seed) {
			hits = append(hits, seed)
		}
	}
	return hits
}

func TestKeyedCodes(t *testing.T) {
	secret := bytes.Repeat([]byte{1}, 32)
	for _, n := range []int{1, 4, 106, 107, 5000, 100000} {
		c := KeyedCodes(secret, 7, n)
		seen := map[string]bool{}
		for _, x := range c {
			if len(x) != KeyedCodeLength(n) || seen[x] {
				t.Fatalf("n=%d: code %q repeated or of the wrong length", n, x)
			}
			seen[x] = true
		}
	}
	if KeyedCodeLength(106) != 3 || KeyedCodeLength(107) != 4 || KeyedCodeLength(1_000_000) != 6 {
		t.Errorf("code lengths %d %d %d", KeyedCodeLength(106), KeyedCodeLength(107), KeyedCodeLength(1_000_000))
	}
	other := KeyedCodes(bytes.Repeat([]byte{2}, 32), 7, 4)
	if slices.Equal(other, KeyedCodes(secret, 7, 4)) {
		t.Error("codes do not depend on the secret")
	}
	if slices.Equal(KeyedCodes(secret, 8, 4), KeyedCodes(secret, 7, 4)) {
		t.Error("codes do not depend on the seed")
	}
}

// TestUnblindRefusesEditedKeys: a key with codes reordered, of another
// randomisation or another plan does not unblind.
func TestUnblindRefusesEditedKeys(t *testing.T) {
	for _, mode := range []string{design.BlindTreatment, design.BlindUnit} {
		t.Run(mode, func(t *testing.T) {
			l, err := Assign(blindPlan(mode, 99))
			if err != nil {
				t.Fatal(err)
			}
			sealed := l.Sealed()
			key := design.KeyOf(l)
			got, err := Unblind(sealed, key)
			if err != nil {
				t.Fatal(err)
			}
			for i := range got.Units {
				if got.Units[i].Treatment != l.Units[i].Treatment {
					t.Fatalf("unit %d unblinded wrongly", i)
				}
			}
			swapped := key
			if mode == design.BlindUnit {
				swapped.Units = slices.Clone(key.Units)
				swapped.Units[0].Treatment, swapped.Units[1].Treatment = key.Units[1].Treatment, key.Units[0].Treatment
				if swapped.Units[0].Treatment == key.Units[0].Treatment {
					swapped.Units[0].Treatment, swapped.Units[2].Treatment = key.Units[2].Treatment, key.Units[0].Treatment
				}
			} else {
				swapped.Codes = slices.Clone(key.Codes)
				swapped.Codes[0], swapped.Codes[1] = key.Codes[1], key.Codes[0]
			}
			if _, err := Unblind(sealed, swapped); err == nil {
				t.Error("a key with codes reordered (MAC not renewed) unblinded")
			}
			if _, err := design.ParseKey(mustJSON(t, swapped)); err == nil {
				t.Error("ParseKey accepted a key whose MAC does not match")
			}
			// Reordered with a MAC recomputed by someone holding the key:
			// the re-derivation still refuses it.
			resealed := swapped
			resealed.MAC = ""
			resealed.MAC = macOf(resealed)
			if _, err := Unblind(sealed, resealed); err == nil {
				t.Error("a reordered key with a valid MAC unblinded")
			}
			other, _ := Assign(blindPlan(mode, 99))
			if _, err := Unblind(sealed, design.KeyOf(other)); err == nil {
				t.Error("the key of another randomisation (same seed, other secret) unblinded")
			}
			p2 := blindPlan(mode, 99)
			p2.Title = "another"
			l2, _ := Assign(p2)
			if _, err := Unblind(sealed, design.KeyOf(l2)); err == nil {
				t.Error("the key of another plan unblinded")
			}
		})
	}
}

func TestVerifyDuplicateAndSpares(t *testing.T) {
	l, err := Assign(goldenCases()["rcbd"])
	if err != nil {
		t.Fatal(err)
	}
	dup := l
	dup.Units = append(slices.Clone(l.Units), l.Units[3])
	diffs, err := Verify(dup)
	if err != nil || len(diffs) == 0 {
		t.Errorf("a layout with unit %s twice verifies: %v %v", l.Units[3].ID, diffs, err)
	}
	p := perBlockPlan([]int{5, 8, 6}, 4)
	sp, err := Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	if diffs, err := Verify(sp); err != nil || diffs != nil {
		t.Fatalf("spare layout does not verify: %v %v", diffs, err)
	}
	bad := sp
	bad.Spares = slices.Clone(sp.Spares)
	bad.Spares[0].ID = sp.Units[0].ID
	if diffs, _ := Verify(bad); len(diffs) == 0 {
		t.Error("a wrong spare list verifies")
	}
}

// perBlockPlan is a 4-treatment plan on a unit list with blocks of the
// given sizes, k units taken per block.
func perBlockPlan(sizes []int, k int) design.Plan {
	p := plan(design.RCBD, len(sizes), []int{1, 1, 1, 1}, design.Factor{Name: "dose", Levels: []string{"a", "b", "c", "d"}})
	p.BlockName, p.PerBlock = "litter", k
	for b, n := range sizes {
		for i := 0; i < n; i++ {
			p.Units = append(p.Units, design.UnitSpec{ID: fmt.Sprintf("L%d-%d", b+1, i+1), Block: b + 1, BlockLabel: fmt.Sprintf("L%d", b+1)})
		}
	}
	return p
}

func TestPerBlock(t *testing.T) {
	p := perBlockPlan([]int{5, 8, 6, 4}, 4)
	l, err := Assign(p)
	if err != nil {
		t.Fatal(err)
	}
	per := map[int]int{}
	for _, u := range l.Units {
		per[u.Block]++
	}
	spare := map[int]int{}
	for _, s := range l.Spares {
		spare[s.Block]++
	}
	for b, n := range []int{5, 8, 6, 4} {
		if per[b+1] != 4 || spare[b+1] != n-4 {
			t.Errorf("litter %d: %d used, %d spare; want 4 and %d", b+1, per[b+1], spare[b+1], n-4)
		}
	}
	if p.DesignName() != "randomised complete block design" || p.NumUnits() != 16 {
		t.Errorf("%s, %d units", p.DesignName(), p.NumUnits())
	}
	if err := l.Check(); err != nil {
		t.Fatal(err)
	}
}

// TestSpareAndPlaceUniformity: every unit of a block is equally likely to
// be spare (step 7) and every grid place equally likely to be used (step
// 8), over 20,000 seeds (chi-square against equal counts, p > 0.001).
func TestSpareAndPlaceUniformity(t *testing.T) {
	if testing.Short() {
		t.Skip("20,000 layouts (about 2 s)")
	}
	const seeds = 20000
	sp := perBlockPlan([]int{7, 4}, 4)
	usedCount := make([]float64, 7)
	g := plan(design.RCBD, 2, []int{1, 1, 1, 1}, design.Factor{Name: "feed", Levels: []string{"a", "b", "c", "d"}})
	g.Grid = &design.Grid{Rows: 2, Cols: 3, Numbering: design.Serpentine, Placement: design.RandomPlaces}
	placeCount := make([]float64, 6)
	pairCount := make([]float64, 15) // which 2 of the 6 places stay empty
	for s := uint64(0); s < seeds; s++ {
		sp.Seed = s*7919 + 1
		l, err := Assign(sp)
		if err != nil {
			t.Fatal(err)
		}
		for _, u := range l.Units {
			if u.Block == 1 {
				var i int
				fmt.Sscanf(u.ID, "L1-%d", &i)
				usedCount[i-1]++
			}
		}
		g.Seed = s*7919 + 1
		gl, err := Assign(g)
		if err != nil {
			t.Fatal(err)
		}
		used := make([]bool, 6)
		for _, u := range gl.Units[:4] {
			k := (u.Row-1)*3 + u.Col - 1
			placeCount[k]++
			used[k] = true
		}
		pair := 0
		for a := 0; a < 6; a++ {
			for b := a + 1; b < 6; b++ {
				if !used[a] && !used[b] {
					pairCount[pair]++
				}
				pair++
			}
		}
	}
	for name, c := range map[string][]float64{"units of litter 1 used": usedCount, "grid places used": placeCount, "pairs of empty places": pairCount} {
		pv := chi2p(c)
		t.Logf("%s: counts %v, chi-square p = %.3f", name, c, pv)
		if pv < 0.001 {
			t.Errorf("%s not uniform: p = %.2g", name, pv)
		}
	}
}

func mustJSON(t *testing.T, k design.Key) []byte {
	t.Helper()
	b, err := jsonMarshal(k)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func jsonMarshal(v any) ([]byte, error) { return json.Marshal(v) }

// macOf recomputes a key's MAC as design does (HMAC-SHA256 under the
// secret of "allot-key-2", NUL, and the key's JSON without the MAC).
func macOf(k design.Key) string {
	k.MAC = ""
	b, _ := json.Marshal(k)
	m := hmac.New(sha256.New, k.SecretBytes())
	m.Write([]byte(design.KeyFormat + "\x00"))
	m.Write(b)
	return hex.EncodeToString(m.Sum(nil))
}

// BenchmarkAssignUnitList lays out a unit list of litters (5 treatments,
// litters of 5), with and without per-unit blind codes.
func BenchmarkAssignUnitList(b *testing.B) {
	for _, mode := range []string{"", design.BlindUnit} {
		b.Run(fmt.Sprintf("units=100000/blind=%s", mode), func(b *testing.B) {
			p := plan(design.RCBD, 20000, []int{1, 1, 1, 1, 1}, design.Factor{Name: "dose", Levels: []string{"a", "b", "c", "d", "e"}})
			for i := 0; i < 100000; i++ {
				p.Units = append(p.Units, design.UnitSpec{ID: fmt.Sprintf("A%d", i), Block: i/5 + 1, BlockLabel: fmt.Sprintf("L%d", i/5+1)})
			}
			p.Blind, p.BlindMode = mode != "", mode
			secret := bytes.Repeat([]byte{7}, 32)
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := AssignSecret(p, secret); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
