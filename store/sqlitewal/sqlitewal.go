// Package sqlitewal reads SQLite write-ahead logs and database headers
// (no SQLite inside, plain file parsing) to tell whether a leftover WAL
// belongs to its database file. Package store runs Check before SQLite
// sees a file.
package sqlitewal

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
)

// A leftover FILE-wal that belongs to another database is dangerous:
// SQLite's WAL format carries no identity of its database file (the salts
// in the WAL header only tie the frames to that header), so SQLite
// applies any well-formed WAL with the right page size to whatever file
// sits beside it, and the result is a malformed database or one that
// silently mixes two histories. That happens after a database file is
// replaced (a backup copied back with cp, a file moved away) while a WAL
// from before is still there, for example after the server was killed.
//
// Check reads the WAL as SQLite's recovery does (format of
// https://www.SQLite.org/fileformat2.html §4 "The Write-Ahead Log" and
// src/wal.c): a 32-byte header (magic 0x377f0682/3, version 3007000, page
// size, checkpoint sequence, salt-1, salt-2, checksum of the first 24
// bytes), then frames of a 24-byte header (page number, database size in
// pages for a commit frame else 0, the two salts, a cumulative checksum of
// the frame header's first 8 bytes and the page) and one page. A frame is
// valid when its salts equal the header's and the checksum chain holds;
// recovery stops at the first invalid frame and keeps the valid frames up
// to the last commit frame. Only those committed frames are ever applied,
// so a WAL without any is harmless and passes.
//
// SQLite has no identity to compare, so glowlog keeps one: Open gives
// every database file a random nonzero identity in the header field
// PRAGMA user_version (offset 60, unused otherwise), and Backup gives each
// backup a new one. Every page-1 image in a WAL carries the identity of
// its file. Check tests conditions that every genuine pair satisfies:
//
//   - the database file exists and is not empty (SQLite would otherwise
//     discard the WAL and its committed changes);
//   - both use the same page size;
//   - the database file is in WAL mode (header bytes 18 and 19 are 2): a
//     file in rollback mode, such as every backup written by VACUUM INTO,
//     never has a WAL of its own;
//   - when the WAL holds page-1 images (it does after any change of the
//     database size, free list or schema): the last one carries the
//     file's identity (unless the file has none yet), and their file
//     change counters (offset 24, which SQLite sets to the file's counter
//     + 1 when it writes page 1 to the WAL and a checkpoint copies back)
//     follow the file's: the first is at most the file's + 1, the last at
//     least the file's;
//   - without a page-1 image the database size cannot have changed (a
//     size change rewrites page 1, offset 28), so every commit frame's
//     size must equal the file's in-header size.
//
// Not detected: a foreign WAL without page-1 images whose commits have the
// same size as the file, or one from a file without identity (made by a
// glowlog before this check) that happens to satisfy the counters.
// glowlog restore never leaves a foreign WAL: it moves the old WAL aside
// with the old file.

// Error reports a FILE-wal that does not belong to FILE.
type Error struct {
	DB, WAL string
	Reason  string
}

func (e *Error) Error() string {
	return fmt.Sprintf("%s does not belong to %s (%s). SQLite would apply its changes to the wrong database. "+
		"If %s was replaced on purpose (for example by a backup), move the leftover aside and start again: "+
		"mv %s %s.orphan; rm -f %s-shm. If %s was replaced by mistake, put the original file back first: "+
		"the WAL holds its last committed changes",
		e.WAL, e.DB, e.Reason, e.DB, e.WAL, e.WAL, e.DB, e.DB)
}

// WAL header magic numbers: the low bit says whether checksums read the
// content as big-endian (0x377f0683) or little-endian (0x377f0682) words.
const (
	walMagicLE  = 0x377f0682
	walMagicBE  = 0x377f0683
	walVersion  = 3007000
	walHdrSize  = 32
	walFrameHdr = 24
)

// Summary is what Check needs from a WAL's committed frames.
type Summary struct {
	PageSize     uint32
	Salt1, Salt2 uint32
	CkptSeq      uint32
	Commits      int      // committed frames (valid frames up to the last commit frame)
	Page1        []uint32 // file change counters of the committed page-1 images, in WAL order
	LastID       uint32   // file identity (header offset 60) of the last committed page-1 image
	CommitSizes  []uint32 // database size in pages of each commit frame
}

// walChecksum continues SQLite's WAL checksum (wal.c walChecksumBytes)
// over b, whose length is a multiple of 8.
func walChecksum(big bool, b []byte, s0, s1 uint32) (uint32, uint32) {
	for i := 0; i+8 <= len(b); i += 8 {
		var x0, x1 uint32
		if big {
			x0, x1 = binary.BigEndian.Uint32(b[i:]), binary.BigEndian.Uint32(b[i+4:])
		} else {
			x0, x1 = binary.LittleEndian.Uint32(b[i:]), binary.LittleEndian.Uint32(b[i+4:])
		}
		s0 += x0 + s1
		s1 += x1 + s0
	}
	return s0, s1
}

// ReadWAL summarises the WAL at path as SQLite's recovery would see it.
// A missing file, a short or invalid header gives a summary without
// commits (SQLite ignores and resets such a WAL).
func ReadWAL(path string) (Summary, error) {
	var w Summary
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return w, nil
	}
	if err != nil {
		return w, fmt.Errorf("sqlitewal: %w", err)
	}
	defer f.Close()
	r := bufio.NewReaderSize(f, 1<<16)
	hdr := make([]byte, walHdrSize)
	if _, err := io.ReadFull(r, hdr); err != nil {
		return w, nil // empty or truncated header: nothing to apply
	}
	be := binary.BigEndian
	magic := be.Uint32(hdr[0:])
	if magic != walMagicLE && magic != walMagicBE {
		return w, nil
	}
	big := magic == walMagicBE
	ps := be.Uint32(hdr[8:])
	if be.Uint32(hdr[4:]) != walVersion || ps < 512 || ps > 65536 || ps&(ps-1) != 0 {
		return w, nil
	}
	s0, s1 := walChecksum(big, hdr[:24], 0, 0)
	if s0 != be.Uint32(hdr[24:]) || s1 != be.Uint32(hdr[28:]) {
		return w, nil
	}
	w.PageSize, w.CkptSeq = ps, be.Uint32(hdr[12:])
	w.Salt1, w.Salt2 = be.Uint32(hdr[16:]), be.Uint32(hdr[20:])

	frame := make([]byte, walFrameHdr+int(ps))
	var page1 []uint32
	var sizes []uint32
	var lastID uint32
	n := 0
	for {
		if _, err := io.ReadFull(r, frame); err != nil {
			break // end of file or a torn last frame
		}
		fh, page := frame[:walFrameHdr], frame[walFrameHdr:]
		pgno, commit := be.Uint32(fh[0:]), be.Uint32(fh[4:])
		if pgno == 0 || !bytes.Equal(fh[8:16], hdr[16:24]) {
			break
		}
		s0, s1 = walChecksum(big, fh[:8], s0, s1)
		s0, s1 = walChecksum(big, page, s0, s1)
		if s0 != be.Uint32(fh[16:]) || s1 != be.Uint32(fh[20:]) {
			break
		}
		n++
		if pgno == 1 && len(page) >= 100 {
			page1 = append(page1, be.Uint32(page[24:]))
			lastID = be.Uint32(page[60:])
		}
		if commit != 0 {
			sizes = append(sizes, commit)
			// Everything up to here is committed.
			w.Commits = n
			w.Page1 = append(w.Page1[:0], page1...)
			w.CommitSizes = append(w.CommitSizes[:0], sizes...)
			w.LastID = lastID
		}
	}
	return w, nil
}

// Header is what Check needs from a database file's first 100 bytes.
type Header struct {
	Exists, SQLite    bool
	PageSize          uint32
	WriteVer, ReadVer byte
	ChangeCounter     uint32
	SizePages         uint32 // in-header database size
	SizeValid         bool   // version-valid-for equals the change counter
	ID                uint32 // file identity (user_version, offset 60)
}

var sqliteMagic = []byte("SQLite format 3\x00")

// ReadHeader reads the header of the database file at path; a missing
// file gives Exists false, a file that is not SQLite gives SQLite false.
func ReadHeader(path string) (Header, error) {
	var h Header
	f, err := os.Open(path)
	if errors.Is(err, os.ErrNotExist) {
		return h, nil
	}
	if err != nil {
		return h, fmt.Errorf("sqlitewal: %w", err)
	}
	defer f.Close()
	h.Exists = true
	b := make([]byte, 100)
	if _, err := io.ReadFull(f, b); err != nil {
		return h, nil // empty or shorter than a header
	}
	if !bytes.Equal(b[:16], sqliteMagic) {
		return h, nil
	}
	h.SQLite = true
	be := binary.BigEndian
	h.PageSize = uint32(be.Uint16(b[16:]))
	if h.PageSize == 1 {
		h.PageSize = 65536
	}
	h.WriteVer, h.ReadVer = b[18], b[19]
	h.ChangeCounter = be.Uint32(b[24:])
	h.SizePages = be.Uint32(b[28:])
	h.SizeValid = be.Uint32(b[92:]) == h.ChangeCounter && h.SizePages > 0
	h.ID = be.Uint32(b[60:])
	return h, nil
}

// Check returns a *Error when path-wal holds committed changes that
// cannot belong to the database file at path (see the conditions above),
// and nil when there is no such WAL or it may belong.
//
// It may run while another process has the database open: it judges only
// a stable view (the WAL read twice, the database header in between, both
// WAL reads with the same salts and the same committed frames, so that a
// checkpoint in between copied nothing the view lacks) and reports a
// mismatch only when three stable views agree. A WAL that never holds
// still is in use by a live writer, which owns it.
func Check(path string) error {
	walPath := path + "-wal"
	mismatches := 0
	for range 20 {
		a, err := ReadWAL(walPath)
		if err != nil {
			return err
		}
		if a.Commits == 0 {
			return nil
		}
		h, err := ReadHeader(path)
		if err != nil {
			return err
		}
		b, err := ReadWAL(walPath)
		if err != nil {
			return err
		}
		if b.Commits == 0 {
			return nil // checkpointed and reset meanwhile
		}
		if a.Salt1 != b.Salt1 || a.Salt2 != b.Salt2 || a.CkptSeq != b.CkptSeq || a.Commits != b.Commits {
			continue // a live writer changed it meanwhile: look again
		}
		reason := walMismatch(h, b)
		if reason == "" {
			return nil
		}
		if mismatches++; mismatches == 3 {
			return &Error{DB: path, WAL: walPath, Reason: reason}
		}
	}
	return nil
}

// walMismatch names the first condition a genuine pair would satisfy and
// this one does not, or returns "".
func walMismatch(h Header, w Summary) string {
	switch {
	case !h.Exists:
		return fmt.Sprintf("the database file is missing but the WAL holds %d committed pages", w.Commits)
	case !h.SQLite:
		return fmt.Sprintf("the database file is empty or not a SQLite database but the WAL holds %d committed pages", w.Commits)
	case h.PageSize != w.PageSize:
		return fmt.Sprintf("page size %d in the WAL, %d in the database", w.PageSize, h.PageSize)
	case h.WriteVer != 2 || h.ReadVer != 2:
		return "the database file is in rollback-journal mode (a backup or a copy), which never has a WAL of its own"
	}
	c := h.ChangeCounter
	if len(w.Page1) > 0 {
		if h.ID != 0 && w.LastID != h.ID {
			return fmt.Sprintf("file identity %08x in the WAL, %08x in the database", w.LastID, h.ID)
		}
		first, last := w.Page1[0], w.Page1[len(w.Page1)-1]
		if first > c+1 || last < c {
			return fmt.Sprintf("change counters %d…%d in the WAL do not follow the database's %d", first, last, c)
		}
		return ""
	}
	if h.SizeValid {
		for _, n := range w.CommitSizes {
			if n != h.SizePages {
				return fmt.Sprintf("the WAL commits a database of %d pages without changing page 1, the database has %d", n, h.SizePages)
			}
		}
	}
	return ""
}
