// Package verify proves that a model file is intact and normalised before it
// ships: every byte is accounted for, the trie is well formed, every stored
// value is a possible log10 probability or back-off weight, and every
// context's conditional distribution sums to one.
//
// File (or Bytes) runs the checks in a fixed order and returns a Report with
// one Check per name; each failed check lists what is wrong and where (the
// section of the file and the byte offset, and the n-gram when one is
// concerned):
//
//	header          magic, format version, section count, file length, the
//	                reserved field, the CRC-32C of the header and directory
//	directory       every section lies inside the file, aligned, in order,
//	                without overlap, at most once per kind and order
//	checksums       the CRC-32C of every section
//	digest          the SHA-256 content digest recorded at build time
//	padding         every byte between and after the sections is zero
//	opens           the format reader accepts the file (spec §6.1: summary,
//	                required sections, lengths, encodings, codebooks, markers)
//	vocabulary      words valid UTF-8 and strictly sorted, offsets in range
//	prefix-closure  child ranges well formed and monotone, so the context of
//	                every stored n-gram is stored
//	ids             every stored word id lies inside the vocabulary
//	order           the entries under every context are sorted by word
//	values          no NaN or infinity (except the -Inf of the unigram <s>),
//	                no probability above 1, every back-off weight finite,
//	                every codebook index inside its codebook
//	suffix-closure  when the model is flagged suffix-closed, it is
//	normalisation   for the empty context and every stored context h,
//	                S(h), the sum of P(w|h) over every word but <s>, is one
//	                within the tolerance
//
// A check that needs a sound file is not run when an earlier one fails:
// the table checks need the header, directory, checksums, digest, padding
// and opens checks to pass; suffix-closure and normalisation need the table
// checks too (normalisation also needs values). Nothing here panics or
// loops on damaged bytes: every stored offset and id is bounds-checked
// before use, and the file is read, never trusted.
//
// # Sums
//
// S(h) follows the model's own back-off rule and assumes neither that the
// back-off weights are right nor that lower orders sum to one. For a
// stored context h with stored successors A(h), and h' its suffix without
// the oldest word,
//
//	S(h) = sum_{w in A(h)} P(w|h) + bow(h) (S(h') - sum_{w in A(h)} P(w|h'))
//
// because every other word gets bow(h) P(w|h'). S of a context that is not
// stored is S of its longest stored suffix (it backs off with weight 1), and
// S of the empty context is the sum of the unigram probabilities, asked of
// the query path (format.Model.Next). The contexts are taken order by order,
// lowest first, so S(h') is known when h comes. P(w|h) of a stored h w is
// its stored value. P(w|h') is the stored value of h'w when h'w is stored
// (the rule looks no further, so this is what Next answers), found by
// galloping forward through the children of h', which ascend by word as
// the successors of h do; when h'w is not stored, Next answers it from the
// query state of h'. The cost is linear in the number of stored n-grams,
// never the number of contexts times the vocabulary; the memory is about
// 21 bytes per stored n-gram below the highest order, besides the file. The contexts of one
// order are shared out among the processors (GOMAXPROCS); the report does
// not depend on how many there are.
//
// The tolerance is DefaultTolerance(m) unless Options.Tolerance is set.
package verify
