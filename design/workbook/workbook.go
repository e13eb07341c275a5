// Package workbook owns allot's data-entry workbook (.xlsx, Office Open XML
// as read and written by excelize): writing it from a layout, filling it (the
// demo's stand-in for a technician), and reading it back with a check of
// every cell. No other package knows its sheets, headers or cells.
//
// # Format
//
//   - "Study": the plan in plain words (title, design, treatments, blocks,
//     seed, fingerprint, allot version, created time) and instructions.
//   - "Entry": one row per unit below a frozen header row: Unit, the block
//     column (RCBD), Position, Row and Column (grid plans), Treatment (or
//     Code, blind plans), one column per factor (factorial plans), one
//     column per response, Status (empty, measured, lost or excluded; with
//     subsamples, a Status on any of a unit's rows is the unit's), Reason,
//     Notes. The header has a filter; the sheet is not protected (sorting a
//     protected sheet fails in spreadsheet programs): the check compares
//     every design cell with the stored plan instead. Unit IDs are numbers
//     only when a spreadsheet keeps them exactly ("101"); "007", "+1" and
//     the like are text.
//   - "Map": a legend, then each block as its grid (or a row of positions)
//     with unit IDs and treatments (or codes), tinted by treatment unless
//     blind, rows tall enough to show both lines.
//   - "allot-data" (hidden): cell B1 the plan fingerprint, B2 the SHA-256 of
//     the stored document, B3 the number of chunks, and from A4 down the
//     JSON document {"plan":…, "units":…} in chunks of at most 30,000
//     characters (a cell holds 32,767). For a blind plan the document holds
//     the plan without its seed, units without their treatment (−1) and
//     "labels", each unit's code; B1 is the full plan's fingerprint, which
//     a key file must reproduce (for plans with a blind mode, the plan's
//     fingerprint, which leaves the seed out). "spares" lists the units of
//     the list that the plan leaves out (also named on the Study sheet). A
//     workbook filled by a simulation carries "simulated", its notice.
//     Chunks are cut between characters (at most 30,000 UTF-16 code units
//     each), never inside one. Another program may re-save the
//     sheet as merely hidden; reading does not depend on how hidden it is.
//
// Every visible sheet is set up to print (see setupPrint): A4 or letter,
// one page wide, landscape when the columns need it, the title and plan ID
// in the page header and page numbers in the footer.
package workbook

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"

	"github.com/allotproject/allot/design"
)

// Sheet names and fixed headers.
const (
	SheetStudy = "Study"
	SheetEntry = "Entry"
	SheetMap   = "Map"
	SheetData  = "allot-data"

	headUnit      = "Unit"
	headPosition  = "Position"
	headRow       = "Row"
	headColumn    = "Column"
	headTreatment = "Treatment"
	headCode      = "Code"
	headOrder     = "Measure order"
	headSubsample = "Subsample"
	headNotes     = "Notes"
	headStatus    = "Status"
	headReason    = "Reason"

	chunkSize = 30000
)

// Limits applied when opening a workbook, so that an oversized or zip-bomb
// file is refused instead of exhausting memory.
const (
	UnzipSizeLimit    = 1 << 30 // 1 GiB unpacked in all
	UnzipXMLSizeLimit = 1 << 28 // 256 MiB for one worksheet in memory
)

// stored is the document kept on the hidden sheet.
type stored struct {
	Plan  json.RawMessage `json:"plan"`
	Units json.RawMessage `json:"units"`
	// Labels holds each unit's blind code (blind plans only).
	Labels []string `json:"labels,omitempty"`
	// Spares lists the units of the list left out (Plan.PerBlock).
	Spares []design.Spare `json:"spares,omitempty"`
	// Simulated is the notice of a workbook filled by a simulation (the
	// demo), kept here under the checksum so that clearing the visible
	// notice cannot make simulated values pass for measurements.
	Simulated string `json:"simulated,omitempty"`
}

func digest(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}
