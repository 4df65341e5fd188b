package storage

import "testing"

func TestDict(t *testing.T) {
	d := NewDict()
	ids := []string{"acct-b", "acct-a", "acct-b", "", "acct-a ", "acct-c"}
	want := []struct {
		x     uint32
		isNew bool
	}{{0, true}, {1, true}, {0, false}, {2, true}, {3, true}, {4, true}}
	for i, id := range ids {
		x, isNew := d.Intern(id)
		if x != want[i].x || isNew != want[i].isNew {
			t.Fatalf("Intern(%q) = %d %v, want %d %v", id, x, isNew, want[i].x, want[i].isNew)
		}
	}
	if d.Len() != 5 || len(d.From(3)) != 2 || d.From(3)[0] != ids[4] {
		t.Fatalf("Len %d, From(3) %q, want 5 and the last two names", d.Len(), d.From(3))
	}
	if x, ok := d.Lookup("acct-a "); !ok || x != 3 || d.Name(3) != "acct-a " {
		t.Fatalf("ids are kept byte for byte: Lookup %d %v, Name(3) %q", x, ok, d.Name(3))
	}
	if _, ok := d.Lookup("acct-z"); ok {
		t.Fatal("Lookup of an absent id succeeded")
	}
	buf := []byte("acct-c")
	if x, isNew := d.InternBytes(buf); x != 4 || isNew {
		t.Fatalf("InternBytes(known) = %d %v", x, isNew)
	}
	copy(buf, "acct-d")
	if x, isNew := d.InternBytes(buf); x != 5 || !isNew {
		t.Fatalf("InternBytes(new) = %d %v", x, isNew)
	}
	copy(buf, "acct-x")
	if d.Name(5) != "acct-d" {
		t.Fatalf("InternBytes kept a reference to the caller's buffer: Name(5) = %q", d.Name(5))
	}
	known := []byte("acct-b")
	if n := testing.AllocsPerRun(100, func() { d.InternBytes(known) }); n != 0 {
		t.Fatalf("InternBytes of a known id allocates %v times", n)
	}
	defer func() {
		if recover() == nil {
			t.Fatal("Name of an unknown number did not panic")
		}
	}()
	d.Name(6)
}
