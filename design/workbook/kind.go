package workbook

import (
	"archive/zip"
	"bytes"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
)

// Foreign spreadsheet formats the reader recognises to say how to convert
// them.
const (
	FormatODS = "ods" // OpenDocument spreadsheet
	FormatXLS = "xls" // Excel 97–2003 binary workbook
)

// Format returns FormatODS or FormatXLS when the file at path is a
// spreadsheet in one of those formats (by its content, or by its name when
// it cannot be read), and "" otherwise.
func Format(path string) string {
	if f, err := os.Open(path); err == nil {
		defer f.Close()
		head := make([]byte, 8)
		n, _ := io.ReadFull(f, head)
		head = head[:n]
		switch {
		case bytes.HasPrefix(head, []byte{0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1}):
			return FormatXLS // the OLE2 compound file of .xls
		case bytes.HasPrefix(head, []byte("PK\x03\x04")):
			if zr, err := zip.OpenReader(path); err == nil {
				defer zr.Close()
				for _, zf := range zr.File {
					if zf.Name == "mimetype" {
						rc, err := zf.Open()
						if err != nil {
							break
						}
						b, _ := io.ReadAll(io.LimitReader(rc, 100))
						rc.Close()
						if strings.Contains(string(b), "opendocument.spreadsheet") {
							return FormatODS
						}
					}
				}
			}
			return ""
		}
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".ods":
		return FormatODS
	case ".xls":
		return FormatXLS
	}
	return ""
}

// checkKind refuses, with one line saying what to do, what is not an .xlsx
// file: a directory, a missing file, an .ods or .xls workbook.
func checkKind(path string) error {
	st, err := os.Stat(path)
	switch {
	case err != nil:
		return &FileError{Path: path, Msg: "cannot be opened: " + strings.TrimPrefix(err.Error(), "stat "+path+": ")}
	case st.IsDir():
		return &FileError{Path: path, Msg: "is a directory, not a workbook; give the .xlsx file itself"}
	}
	switch Format(path) {
	case FormatODS:
		return &FileError{Path: path, Msg: "is an OpenDocument spreadsheet (.ods); allot reads .xlsx: save a copy as Excel 2007-365 (.xlsx) and check that, or run again with --convert (needs LibreOffice)"}
	case FormatXLS:
		return &FileError{Path: path, Msg: "is an Excel 97-2003 workbook (.xls); allot reads .xlsx: save a copy as Excel 2007-365 (.xlsx) and check that, or run again with --convert (needs LibreOffice)"}
	}
	return nil
}

// Convert converts an .ods or .xls workbook to .xlsx with LibreOffice
// (headless, with a throw-away profile) into directory dir, and returns
// the new file's path. The original is only read.
func Convert(path, dir string) (string, error) {
	lo := ""
	for _, name := range []string{"libreoffice", "soffice"} {
		if p, err := exec.LookPath(name); err == nil {
			lo = p
			break
		}
	}
	if lo == "" {
		return "", &FileError{Path: path, Msg: "--convert needs LibreOffice (libreoffice or soffice on the PATH), which is not installed; save a copy as .xlsx in your spreadsheet program instead"}
	}
	profile, err := os.MkdirTemp(dir, "profile")
	if err != nil {
		return "", err
	}
	defer os.RemoveAll(profile)
	cmd := exec.Command(lo, "--headless", "--norestore", "-env:UserInstallation=file://"+filepath.ToSlash(profile), "--convert-to", "xlsx", "--outdir", dir, path)
	out, err := cmd.CombinedOutput()
	target := filepath.Join(dir, strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))+".xlsx")
	if _, serr := os.Stat(target); err != nil || serr != nil {
		return "", &FileError{Path: path, Msg: fmt.Sprintf("LibreOffice could not convert it to .xlsx (%v: %s); save a copy as .xlsx in your spreadsheet program instead", err, strings.TrimSpace(string(out)))}
	}
	return target, nil
}
