package workbook

import (
	"encoding/binary"
	"unicode/utf16"
)

// oleFile builds a minimal OLE compound file holding the named streams,
// each 4096 bytes so that they sit in regular sectors. The layout follows
// "[MS-CFB] Compound File Binary File Format", sections 2.2 (header), 2.3
// (FAT) and 2.6 (directory entries), version 3 with 512-byte sectors.
func oleFile(streams ...string) []byte {
	const (
		sector     = 512
		streamSize = 4096
		endOfChain = 0xFFFFFFFE
		freeSect   = 0xFFFFFFFF
		fatSect    = 0xFFFFFFFD
		noStream   = 0xFFFFFFFF
	)
	perStream := streamSize / sector
	// Sector 0: FAT; sector 1: directory; then the streams.
	nSectors := 2 + perStream*len(streams)
	out := make([]byte, sector*(1+nSectors))
	le := binary.LittleEndian
	h := out[:sector]
	copy(h, oleSignature)
	le.PutUint16(h[24:], 0x003E) // minor version
	le.PutUint16(h[26:], 3)      // major version
	le.PutUint16(h[28:], 0xFFFE) // byte order
	le.PutUint16(h[30:], 9)      // sector shift: 512
	le.PutUint16(h[32:], 6)      // mini sector shift: 64
	le.PutUint32(h[44:], 1)      // FAT sectors
	le.PutUint32(h[48:], 1)      // first directory sector
	le.PutUint32(h[56:], 4096)   // mini stream cutoff
	le.PutUint32(h[60:], endOfChain)
	le.PutUint32(h[68:], endOfChain)
	le.PutUint32(h[76:], 0) // DIFAT[0]: the FAT is sector 0
	for i := 1; i < 109; i++ {
		le.PutUint32(h[76+4*i:], freeSect)
	}
	sec := func(i int) []byte { return out[sector*(1+i) : sector*(2+i)] }
	fat := sec(0)
	for i := 0; i < sector/4; i++ {
		le.PutUint32(fat[4*i:], freeSect)
	}
	le.PutUint32(fat[0:], fatSect)
	le.PutUint32(fat[4:], endOfChain)
	for s := range streams {
		first := 2 + s*perStream
		for k := 0; k < perStream; k++ {
			next := uint32(first + k + 1)
			if k == perStream-1 {
				next = endOfChain
			}
			le.PutUint32(fat[4*(first+k):], next)
		}
	}
	dir := sec(1)
	entry := func(i int, name string, typ byte, child, right uint32, start uint32, size uint64) {
		e := dir[128*i : 128*(i+1)]
		u := utf16.Encode([]rune(name))
		for j, c := range u {
			le.PutUint16(e[2*j:], c)
		}
		le.PutUint16(e[64:], uint16(2*(len(u)+1)))
		e[66] = typ
		e[67] = 1 // black
		le.PutUint32(e[68:], noStream)
		le.PutUint32(e[72:], right)
		le.PutUint32(e[76:], child)
		le.PutUint32(e[116:], start)
		le.PutUint64(e[120:], size)
	}
	entry(0, "Root Entry", 5, 1, noStream, endOfChain, 0)
	for s, name := range streams {
		right := uint32(noStream)
		if s+1 < len(streams) {
			right = uint32(s + 2)
		}
		entry(s+1, name, 2, noStream, right, uint32(2+s*perStream), streamSize)
	}
	for i := len(streams) + 1; i < 4; i++ {
		e := dir[128*i : 128*(i+1)]
		le.PutUint32(e[68:], noStream)
		le.PutUint32(e[72:], noStream)
		le.PutUint32(e[76:], noStream)
	}
	return out
}
