package atomicfile

import (
	"errors"

	"golang.org/x/sys/unix"
)

// renameNoReplace moves tmp to path unless path exists, in one step
// (renamex_np with RENAME_EXCL, macOS 10.12+), falling back to a hard link
// where the file system does not support the flag.
func renameNoReplace(tmp, path string) error {
	err := unix.RenamexNp(tmp, path, unix.RENAME_EXCL)
	if errors.Is(err, unix.EINVAL) || errors.Is(err, unix.ENOTSUP) || errors.Is(err, unix.ENOSYS) {
		return linkNoReplace(tmp, path)
	}
	return err
}
