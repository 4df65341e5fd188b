// Package tmpfs gives tests real size-limited and read-only directories:
// a tmpfs mounted with a size, a filler file that leaves a chosen amount
// of it free, and a read-only remount. Mounting needs root (CAP_SYS_ADMIN);
// where the test cannot mount, it is skipped with a message saying so.
//
// It is for tests of what the programs do when a disk fills up or is
// read-only; it is not for use by the programs themselves.
package tmpfs

import (
	"fmt"
	"os"
	"syscall"
	"testing"
)

// Mount mounts a tmpfs of size bytes on dir (made when missing) for the
// rest of the test, and skips the test when it cannot mount one.
func Mount(t testing.TB, dir string, size int64) {
	t.Helper()
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mount("tmpfs", dir, "tmpfs", 0, fmt.Sprintf("size=%d,mode=0755", size)); err != nil {
		t.Skipf("this test needs a size-limited file system: mounting a tmpfs on %s needs root (CAP_SYS_ADMIN): %v", dir, err)
	}
	t.Cleanup(func() {
		if err := syscall.Unmount(dir, syscall.MNT_DETACH); err != nil {
			t.Errorf("unmount %s: %v", dir, err)
		}
	})
}

// Free returns the bytes free to this process on dir's file system.
func Free(t testing.TB, dir string) int64 {
	t.Helper()
	var s syscall.Statfs_t
	if err := syscall.Statfs(dir, &s); err != nil {
		t.Fatal(err)
	}
	return int64(s.Bavail) * int64(s.Bsize)
}

// Fill allocates a file in dir so that about leave bytes of its file
// system stay free (never less; more by less than a page), and returns a
// function that deletes the file again: "something else filled the disk",
// then "space was freed".
func Fill(t testing.TB, dir string, leave int64) (release func()) {
	t.Helper()
	n := (Free(t, dir) - leave) &^ 4095
	if n <= 0 {
		return func() {}
	}
	f, err := os.CreateTemp(dir, "filler-")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := syscall.Fallocate(int(f.Fd()), 0, 0, n); err != nil {
		os.Remove(f.Name())
		t.Fatalf("filling %s with %d bytes: %v", dir, n, err)
	}
	name := f.Name()
	return func() {
		if err := os.Remove(name); err != nil && !os.IsNotExist(err) {
			t.Errorf("freeing space: %v", err)
		}
	}
}

// ReadOnly remounts the tmpfs on dir (see Mount) read-only, for the rest
// of the test or until the returned function makes it writable again.
func ReadOnly(t testing.TB, dir string) (writable func()) {
	t.Helper()
	if err := syscall.Mount("", dir, "", syscall.MS_REMOUNT|syscall.MS_RDONLY, ""); err != nil {
		t.Fatalf("remounting %s read-only: %v", dir, err)
	}
	again := func() {
		if err := syscall.Mount("", dir, "", syscall.MS_REMOUNT, ""); err != nil {
			t.Errorf("remounting %s writable: %v", dir, err)
		}
	}
	return again
}
