// Package inspect shows what a model file holds, for the engineer who must
// see exactly what was shipped when a production score looks wrong.
//
// Summarize reads the header, the section directory and the build
// information into a Summary; Statistics measures the sizes, codebooks,
// contexts and back-off weights of every order; Walk and Dump list the
// stored entries (all of them, one order, or the subtree under a prefix)
// without holding more than one entry in memory; Next ranks the words that
// may follow a context, each scored through the model's own query path.
//
// Nothing here checks checksums of the large sections or signatures: that
// is the verifier's job. Every function reads the model in place and
// bounds-checks what it reads, as package format does.
//
// # JSON
//
// The exported types marshal to the JSON that "ingot inspect --json"
// prints; the key names are part of the tool's documented output. Numbers
// JSON cannot express (the -Inf log10 probability of <s>, a NaN left by a
// damaged file) are written as null. Stored log10 values (type Stored) are
// written as the shortest decimal that reads back as the same float32.
package inspect
