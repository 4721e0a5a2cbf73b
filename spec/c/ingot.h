/*
 * ingot.h: a reader of ingot model files (spec/FORMAT.md), versions 1 to 3,
 * in portable C99.
 *
 * Written from the specification alone, as its proof and as code a device
 * team can drop in: one header and one source file (ingot.c), libc only,
 * no global state, and no allocation at all. The caller owns every object
 * (the model, a query state, an error report), on the stack or anywhere it
 * likes; the reader keeps pointers into the file's bytes, which stay where
 * they are (mapped from a path, or a buffer the caller provides and keeps
 * alive until ingot_close).
 *
 * Opening checks, in time independent of the model's size, everything the
 * specification's section 6.1 lists (magic, version, header and directory
 * checksum, placement of every section, the sections the order needs, their
 * lengths, the summary, the vocabulary's ends, the markers). Every later read
 * is bounds-checked (section 6.2): a damaged column can give wrong answers,
 * never a read outside the file. ingot_check proves the rest: every
 * section's CRC-32C, the zero padding and the SHA-256 content digest.
 *
 * A query carries its context in an ingot_state, so scoring running text
 * costs one child search per order and word (section 7).
 */
#ifndef INGOT_H
#define INGOT_H

#include <stddef.h>
#include <stdint.h>

#ifdef __cplusplus
extern "C" {
#endif

/* The highest order a model file may have (summary, section 4.1). */
#define INGOT_MAX_ORDER 10

/* An entry index meaning "not stored". */
#define INGOT_NONE 0xFFFFFFFFu

/* What went wrong, in an ingot_error and as the return value of the calls
 * that can fail. */
typedef enum {
	INGOT_OK = 0,
	INGOT_ERR_IO = 1,       /* the file could not be opened, sized or mapped */
	INGOT_ERR_FORMAT = 2,   /* not a model file, or a rule of the format broken */
	INGOT_ERR_VERSION = 3,  /* a format version this reader does not read */
	INGOT_ERR_CHECKSUM = 4, /* a checksum, the padding or the content digest is wrong */
	INGOT_ERR_ARGUMENT = 5  /* the caller passed something unusable */
} ingot_status;

/* An error report: the status, the section concerned (its index in the
 * directory, kind and order) when there is one, and a one-line message
 * saying what and where, without a trailing newline. */
typedef struct {
	ingot_status status;
	int section;    /* directory index, or -1 when no section is concerned */
	uint32_t kind;  /* its kind (0 when none) */
	uint32_t order; /* its order field */
	char message[200];
} ingot_error;

/* The private parts of a model, exposed only so that the caller can
 * allocate an ingot_model. Read them through the functions below. */
typedef struct {
	const unsigned char *data; /* plain: f32 x count; packed: the bit stream; tiered: the narrow values */
	uint64_t length;           /* bytes at data */
	const unsigned char *codebook; /* packed: f32 x codebook_length */
	uint32_t codebook_length;
	uint32_t bits; /* 0 for a plain column, else bits per index (the wide width when tiered) */
	uint32_t narrow_bits;           /* tiered (encoding 5): b, else 0 */
	const unsigned char *table;     /* tiered: u16 x (2^b - 1) levels */
	const unsigned char *counters;  /* tiered: u32 per 256 entries */
	uint64_t counter_count;
	const unsigned char *wide;      /* tiered: the escaped entries' indexes */
	uint64_t wide_length;           /* bytes at wide */
	uint64_t escapes;               /* tiered: E */
} ingot_column_;

/* An Elias-Fano sequence (format version 3). */
typedef struct {
	uint64_t n;         /* values */
	uint32_t low_bits;  /* L */
	const unsigned char *low, *high, *samples;
	uint64_t low_words, high_words;
} ingot_sequence_;

typedef struct {
	uint64_t count;                     /* n_k */
	uint32_t key_encoding;              /* last words: 0 plain ids, 2 coded ids, 3 coded successor ranks, 7 and 8 the same in sibling lists, 9 and 10 in coded sibling lists */
	const unsigned char *last_words;    /* u32 x n_k, orders 2..N (encoding 0) */
	ingot_sequence_ keys;               /* orders 2..N (encodings 2 and 3) */
	ingot_sequence_ list_starts;        /* orders 2..N (encodings 7 to 10): m_{k-1} + 1 bit starts */
	const unsigned char *key_stream;    /* orders 2..N (encodings 7 to 10): the keys' bit stream */
	uint64_t key_stream_length;         /* bytes at key_stream */
	const unsigned char *child_starts;  /* u32 x (n_k + 1), orders 1..N-1 (versions 1 and 2) */
	ingot_sequence_ context_starts;     /* m_k + 1 child starts (version 3) */
	const unsigned char *context_bits;  /* one bit per entry (version 3) */
	const unsigned char *context_counts;/* rank directory (version 3) */
	uint64_t contexts;                  /* m_k (version 3) */
	ingot_column_ probabilities;
	ingot_column_ backoffs;             /* orders 1..N-1 */
} ingot_level_;

typedef struct {
	const unsigned char *data;
	size_t size;
	int mapped; /* 1 when ingot_open_file mapped the bytes */
	uint32_t version;
	uint32_t sections;
	uint32_t order;
	uint32_t vocabulary_size;
	uint32_t start_id, end_id, unknown_id;
	uint32_t flags;
	const unsigned char *word_starts; /* u32 x (V + 1) (encoding 0) */
	int word_starts_coded;            /* version 3: Elias-Fano word starts (encoding 2) */
	ingot_sequence_ word_starts_seq;
	const unsigned char *word_text;
	uint64_t word_text_length;
	const unsigned char *word_slots;  /* version 3: the word hash's slots */
	uint32_t word_slot_count;
	uint32_t word_slot_bits;          /* 0: u32 slots (encoding 0); else B (encodings 4 and 5) */
	uint32_t word_tag_bits;           /* F, bits of a fingerprint (encoding 5); else 0 */
	ingot_level_ levels[INGOT_MAX_ORDER];
} ingot_model;

/* The context of a query: for j = 1..length, entry[j-1] is the entry of
 * order j that stores the last j words of the context, or INGOT_NONE. */
typedef struct {
	uint32_t length;
	uint32_t entry[INGOT_MAX_ORDER - 1];
} ingot_state;

/* ingot_open_file maps the file at path read-only and checks it as
 * ingot_open_buffer does. On POSIX systems it uses mmap; elsewhere it
 * reports INGOT_ERR_IO (read the file into a buffer and use
 * ingot_open_buffer). On failure m holds nothing to close. */
ingot_status ingot_open_file(ingot_model *m, const char *path, ingot_error *err);

/* ingot_open_buffer reads the model from size bytes at data, which the
 * caller keeps unchanged until ingot_close. data must be aligned to at
 * least 1 byte only: every value is read byte by byte. */
ingot_status ingot_open_buffer(ingot_model *m, const void *data, size_t size, ingot_error *err);

/* ingot_close unmaps a mapped file and clears m. Safe on a cleared model. */
void ingot_close(ingot_model *m);

/* ingot_check reads every byte once: each section's CRC-32C, the zero
 * padding between and after sections, and the SHA-256 content digest
 * (section 5). It stops at the first problem and names the section. */
ingot_status ingot_check(const ingot_model *m, ingot_error *err);

/* The model's facts. */
uint32_t ingot_order(const ingot_model *m);
uint32_t ingot_version(const ingot_model *m);
uint32_t ingot_vocabulary_size(const ingot_model *m);
uint32_t ingot_start_id(const ingot_model *m);   /* <s> */
uint32_t ingot_end_id(const ingot_model *m);     /* </s> */
uint32_t ingot_unknown_id(const ingot_model *m); /* <unk> */
uint64_t ingot_count(const ingot_model *m, uint32_t order); /* n_k; 0 outside 1..N */

/* ingot_lookup sets *id to the id of the len bytes at word and returns 1,
 * or returns 0 when the word is not in the vocabulary (score it as
 * ingot_unknown_id). */
int ingot_lookup(const ingot_model *m, const char *word, size_t len, uint32_t *id);

/* ingot_word returns the bytes of word id (not NUL-terminated) and sets
 * *len, or returns NULL when id is not a word or its bytes lie outside the
 * word text (a damaged file). */
const char *ingot_word(const ingot_model *m, uint32_t id, size_t *len);

/* ingot_begin_sentence sets s to the context "<s>"; ingot_empty_context to
 * the empty context. */
void ingot_begin_sentence(const ingot_model *m, ingot_state *s);
void ingot_empty_context(const ingot_model *m, ingot_state *s);

/* ingot_next returns log10 P(word | context of s) by the back-off rule of
 * section 7 and moves s past word. It allocates nothing. A word id that is
 * not below the vocabulary size gets -INFINITY and leaves an empty context.
 * A codebook index out of range in a damaged file gives NaN. */
double ingot_next(const ingot_model *m, ingot_state *s, uint32_t word);

/* ingot_section_name returns the plain name of a section kind
 * ("probabilities", ...), or "unknown". */
const char *ingot_section_name(uint32_t kind);

/* The checksums the format uses, for callers and tests.
 * ingot_crc32c continues a CRC-32C (start from 0); ingot_sha256 digests n
 * bytes into out. The incremental form: init, update any number of times,
 * final. */
uint32_t ingot_crc32c(uint32_t crc, const void *data, size_t n);

typedef struct {
	uint32_t h[8];
	uint64_t length;       /* bytes digested so far */
	unsigned char block[64];
	size_t used;           /* bytes in block */
} ingot_sha256_ctx;

void ingot_sha256_init(ingot_sha256_ctx *c);
void ingot_sha256_update(ingot_sha256_ctx *c, const void *data, size_t n);
void ingot_sha256_final(ingot_sha256_ctx *c, unsigned char out[32]);
void ingot_sha256(const void *data, size_t n, unsigned char out[32]);

#ifdef __cplusplus
}
#endif

#endif /* INGOT_H */
