package storage

import "syscall"

// freeSpace returns the bytes of dir's file system available to this
// process (statfs f_bavail: root's reserve on ext4 is not counted).
func freeSpace(dir string) (uint64, bool) {
	var s syscall.Statfs_t
	if err := syscall.Statfs(dir, &s); err != nil {
		return 0, false
	}
	return s.Bavail * uint64(s.Bsize), true
}
