package atomicfile

import (
	"errors"

	"golang.org/x/sys/unix"
)

// renameNoReplace moves tmp to path unless path exists, in one step
// (renameat2 with RENAME_NOREPLACE, Linux 3.15+), falling back to a hard
// link where the file system does not support the flag.
func renameNoReplace(tmp, path string) error {
	err := unix.Renameat2(unix.AT_FDCWD, tmp, unix.AT_FDCWD, path, unix.RENAME_NOREPLACE)
	if errors.Is(err, unix.EINVAL) || errors.Is(err, unix.ENOSYS) || errors.Is(err, unix.ENOTSUP) {
		return linkNoReplace(tmp, path)
	}
	return err
}
