// Package format writes and reads ingot model files: compact, self-describing,
// verifiable binary back-off language models that a decoder on a device
// memory-maps and queries in place.
//
// Write (or Marshal) turns a tables.Tables into bytes; Open maps a file and
// FromBytes wraps bytes already in memory. Opening checks the header, the
// directory and the small sections, never the large columns, so it takes the
// same time for any model size; Verify checks every byte. Queries read the
// mapped bytes directly, bounds-check every stored id and offset, and never
// panic, whatever the file holds.
//
// # Layout
//
// The byte-level specification is spec/FORMAT.md. In short, all integers are
// little-endian and every section starts at a multiple of 8 bytes:
//
//	header      64 bytes: magic "\x89INGOT\r\n", version 1, section count S,
//	            file length, SHA-256 content digest, reserved word,
//	            CRC-32C of header and directory
//	directory   S entries of 32 bytes: kind, encoding, order, CRC-32C,
//	            offset, length
//	summary     order N, vocabulary size V, ids of <s> </s> <unk>, flags,
//	            entries per order
//	build info  UTF-8 JSON: method, discounts, fallbacks, options, version
//	word starts V+1 uint32 offsets into the word text
//	word text   the words, sorted bytewise and concatenated (id = position)
//	then, for each order k = 1..N:
//	last words    (k >= 2) uint32 last word id of each entry
//	probabilities float32 log10 probability of each entry
//	back-offs     (k < N) float32 log10 back-off weight of each entry
//	child starts  (k < N) n_k+1 uint32: entry i's children at order k+1
//	              are [start[i], start[i+1])
//
// The n-grams form a forward trie: order 1 is dense (entry i is word i), and
// the entries of order k+1 are sorted by parent, then last word, which is
// the lexicographic order of their word ids.
//
// # Queries
//
// LogProb answers one prediction by the back-off rule of package tables.
// A decoder scoring running text carries a State instead: Next scores a word
// and moves the state with at most one binary search per order and no
// allocation. Explain lists the steps of one prediction. Words outside the
// vocabulary are the caller's to map to UnknownID.
//
// Tools that rewrite models use Count, WordAt, LogProbAt, LogBackoffAt,
// ChildRange, Find, Entries and ToTables.
package format
