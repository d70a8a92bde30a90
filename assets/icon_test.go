package assets

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"image/png"
	"os"
	"testing"
)

// TestIconSizes checks that every rendered picture of the icon has the
// size its name promises, so that a desktop or Windows never scales the
// wrong one.
func TestIconSizes(t *testing.T) {
	cases := map[string]int{"icon.png": 512}
	for _, s := range []int{16, 22, 24, 32, 48, 64, 128, 256} {
		cases[fmt.Sprintf("icons/%dx%d.png", s, s)] = s
	}
	for name, want := range cases {
		b, err := os.ReadFile(name)
		if err != nil {
			t.Fatal(err)
		}
		cfg, err := png.DecodeConfig(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if cfg.Width != want || cfg.Height != want {
			t.Errorf("%s is %d×%d, want %d×%d", name, cfg.Width, cfg.Height, want, want)
		}
	}
	if !bytes.Equal(Icon, mustRead(t, "icon.png")) {
		t.Error("Icon is not icon.png")
	}
}

// TestIco checks the Windows icon's directory: the sizes Windows asks for
// (16 to 256 pixels; 0 in the directory means 256).
func TestIco(t *testing.T) {
	b := mustRead(t, "icons/slopewise.ico")
	if len(b) < 6 || binary.LittleEndian.Uint16(b[0:]) != 0 || binary.LittleEndian.Uint16(b[2:]) != 1 {
		t.Fatal("icons/slopewise.ico is not an icon file")
	}
	n := int(binary.LittleEndian.Uint16(b[4:]))
	var got []int
	for i := range n {
		e := b[6+16*i:]
		w := int(e[0])
		if w == 0 {
			w = 256
		}
		size := binary.LittleEndian.Uint32(e[8:])
		off := binary.LittleEndian.Uint32(e[12:])
		if int(off)+int(size) > len(b) {
			t.Fatalf("entry %d runs past the end of the file", i)
		}
		got = append(got, w)
	}
	if fmt.Sprint(got) != "[16 24 32 48 64 256]" {
		t.Errorf("icon sizes %v, want [16 24 32 48 64 256]", got)
	}
}

func mustRead(t *testing.T, name string) []byte {
	t.Helper()
	b, err := os.ReadFile(name)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
