/*
 * ingot.c: the reader declared in ingot.h, written from spec/FORMAT.md
 * (versions 1, 2 and 3).
 * Section numbers in comments refer to that document.
 */
#if !defined(_POSIX_C_SOURCE) && (defined(__unix__) || defined(__APPLE__))
#define _POSIX_C_SOURCE 200809L
#endif

#include "ingot.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#if defined(__unix__) || defined(__APPLE__)
#define INGOT_HAVE_MMAP 1
#include <errno.h>
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#endif

/* Section kinds (section 4). */
enum {
	KIND_SUMMARY = 1,
	KIND_BUILD_INFO = 2,
	KIND_WORD_STARTS = 3,
	KIND_WORD_TEXT = 4,
	KIND_LAST_WORDS = 5,
	KIND_PROBABILITIES = 6,
	KIND_BACKOFFS = 7,
	KIND_CHILD_STARTS = 8,
	KIND_SIGNATURE = 9,
	KIND_PROBABILITY_CODEBOOK = 10,
	KIND_BACKOFF_CODEBOOK = 11,
	KIND_CONTEXTS = 12,
	KIND_WORD_HASH = 13,
	KIND_LAST_DEFINED = 13
};

enum {
	HEADER_SIZE = 64,
	ENTRY_SIZE = 32,
	MAX_SECTIONS = 1024, /* a reader MAY refuse more (section 3.1) */
	ENCODING_PLAIN = 0,
	ENCODING_PACKED = 1,
	ENCODING_CODED_IDS = 2,   /* version 3: Elias-Fano, keys are word ids */
	ENCODING_CODED_RANKS = 3, /* version 3: Elias-Fano, keys are successor ranks */
	ENCODING_PACKED_IDS = 4,  /* version 3: word hash slots packed at B bits */
	ENCODING_TAGGED_IDS = 5,  /* version 3: B-bit word ids with F-bit fingerprints */
	ENCODING_TIERED = 6,      /* version 3: tiered codebook indexes (section 4.8.6) */
	ENCODING_LIST_IDS = 7,    /* version 3: word ids in sibling lists (section 4.8.7) */
	ENCODING_LIST_RANKS = 8,  /* version 3: successor ranks in sibling lists (section 4.8.7) */
	ENCODING_CODED_LIST_IDS = 9,    /* version 3: word ids in coded sibling lists (section 4.8.8) */
	ENCODING_CODED_LIST_RANKS = 10, /* version 3: successor ranks in coded sibling lists (section 4.8.8) */
	MAX_CODEBOOK = 65536
};

static const unsigned char magic[8] = {0x89, 'I', 'N', 'G', 'O', 'T', 0x0D, 0x0A};

/* Little-endian reads, byte by byte: no alignment or byte-order assumption
 * (compilers turn these into single loads where they can). */
static inline uint32_t u32le(const unsigned char *p)
{
	return (uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16 | (uint32_t)p[3] << 24;
}

static inline uint64_t u64le(const unsigned char *p)
{
	return (uint64_t)u32le(p) | (uint64_t)u32le(p + 4) << 32;
}

static float f32le(const unsigned char *p)
{
	uint32_t u = u32le(p);
	float f;
	memcpy(&f, &u, sizeof f);
	return f;
}

/* ---- CRC-32C (section 1): reflected Castagnoli polynomial 0x82F63B78. */

static const uint32_t crc_table[256] = {
	0x00000000u, 0xf26b8303u, 0xe13b70f7u, 0x1350f3f4u, 0xc79a971fu, 0x35f1141cu,
	0x26a1e7e8u, 0xd4ca64ebu, 0x8ad958cfu, 0x78b2dbccu, 0x6be22838u, 0x9989ab3bu,
	0x4d43cfd0u, 0xbf284cd3u, 0xac78bf27u, 0x5e133c24u, 0x105ec76fu, 0xe235446cu,
	0xf165b798u, 0x030e349bu, 0xd7c45070u, 0x25afd373u, 0x36ff2087u, 0xc494a384u,
	0x9a879fa0u, 0x68ec1ca3u, 0x7bbcef57u, 0x89d76c54u, 0x5d1d08bfu, 0xaf768bbcu,
	0xbc267848u, 0x4e4dfb4bu, 0x20bd8edeu, 0xd2d60dddu, 0xc186fe29u, 0x33ed7d2au,
	0xe72719c1u, 0x154c9ac2u, 0x061c6936u, 0xf477ea35u, 0xaa64d611u, 0x580f5512u,
	0x4b5fa6e6u, 0xb93425e5u, 0x6dfe410eu, 0x9f95c20du, 0x8cc531f9u, 0x7eaeb2fau,
	0x30e349b1u, 0xc288cab2u, 0xd1d83946u, 0x23b3ba45u, 0xf779deaeu, 0x05125dadu,
	0x1642ae59u, 0xe4292d5au, 0xba3a117eu, 0x4851927du, 0x5b016189u, 0xa96ae28au,
	0x7da08661u, 0x8fcb0562u, 0x9c9bf696u, 0x6ef07595u, 0x417b1dbcu, 0xb3109ebfu,
	0xa0406d4bu, 0x522bee48u, 0x86e18aa3u, 0x748a09a0u, 0x67dafa54u, 0x95b17957u,
	0xcba24573u, 0x39c9c670u, 0x2a993584u, 0xd8f2b687u, 0x0c38d26cu, 0xfe53516fu,
	0xed03a29bu, 0x1f682198u, 0x5125dad3u, 0xa34e59d0u, 0xb01eaa24u, 0x42752927u,
	0x96bf4dccu, 0x64d4cecfu, 0x77843d3bu, 0x85efbe38u, 0xdbfc821cu, 0x2997011fu,
	0x3ac7f2ebu, 0xc8ac71e8u, 0x1c661503u, 0xee0d9600u, 0xfd5d65f4u, 0x0f36e6f7u,
	0x61c69362u, 0x93ad1061u, 0x80fde395u, 0x72966096u, 0xa65c047du, 0x5437877eu,
	0x4767748au, 0xb50cf789u, 0xeb1fcbadu, 0x197448aeu, 0x0a24bb5au, 0xf84f3859u,
	0x2c855cb2u, 0xdeeedfb1u, 0xcdbe2c45u, 0x3fd5af46u, 0x7198540du, 0x83f3d70eu,
	0x90a324fau, 0x62c8a7f9u, 0xb602c312u, 0x44694011u, 0x5739b3e5u, 0xa55230e6u,
	0xfb410cc2u, 0x092a8fc1u, 0x1a7a7c35u, 0xe811ff36u, 0x3cdb9bddu, 0xceb018deu,
	0xdde0eb2au, 0x2f8b6829u, 0x82f63b78u, 0x709db87bu, 0x63cd4b8fu, 0x91a6c88cu,
	0x456cac67u, 0xb7072f64u, 0xa457dc90u, 0x563c5f93u, 0x082f63b7u, 0xfa44e0b4u,
	0xe9141340u, 0x1b7f9043u, 0xcfb5f4a8u, 0x3dde77abu, 0x2e8e845fu, 0xdce5075cu,
	0x92a8fc17u, 0x60c37f14u, 0x73938ce0u, 0x81f80fe3u, 0x55326b08u, 0xa759e80bu,
	0xb4091bffu, 0x466298fcu, 0x1871a4d8u, 0xea1a27dbu, 0xf94ad42fu, 0x0b21572cu,
	0xdfeb33c7u, 0x2d80b0c4u, 0x3ed04330u, 0xccbbc033u, 0xa24bb5a6u, 0x502036a5u,
	0x4370c551u, 0xb11b4652u, 0x65d122b9u, 0x97baa1bau, 0x84ea524eu, 0x7681d14du,
	0x2892ed69u, 0xdaf96e6au, 0xc9a99d9eu, 0x3bc21e9du, 0xef087a76u, 0x1d63f975u,
	0x0e330a81u, 0xfc588982u, 0xb21572c9u, 0x407ef1cau, 0x532e023eu, 0xa145813du,
	0x758fe5d6u, 0x87e466d5u, 0x94b49521u, 0x66df1622u, 0x38cc2a06u, 0xcaa7a905u,
	0xd9f75af1u, 0x2b9cd9f2u, 0xff56bd19u, 0x0d3d3e1au, 0x1e6dcdeeu, 0xec064eedu,
	0xc38d26c4u, 0x31e6a5c7u, 0x22b65633u, 0xd0ddd530u, 0x0417b1dbu, 0xf67c32d8u,
	0xe52cc12cu, 0x1747422fu, 0x49547e0bu, 0xbb3ffd08u, 0xa86f0efcu, 0x5a048dffu,
	0x8ecee914u, 0x7ca56a17u, 0x6ff599e3u, 0x9d9e1ae0u, 0xd3d3e1abu, 0x21b862a8u,
	0x32e8915cu, 0xc083125fu, 0x144976b4u, 0xe622f5b7u, 0xf5720643u, 0x07198540u,
	0x590ab964u, 0xab613a67u, 0xb831c993u, 0x4a5a4a90u, 0x9e902e7bu, 0x6cfbad78u,
	0x7fab5e8cu, 0x8dc0dd8fu, 0xe330a81au, 0x115b2b19u, 0x020bd8edu, 0xf0605beeu,
	0x24aa3f05u, 0xd6c1bc06u, 0xc5914ff2u, 0x37faccf1u, 0x69e9f0d5u, 0x9b8273d6u,
	0x88d28022u, 0x7ab90321u, 0xae7367cau, 0x5c18e4c9u, 0x4f48173du, 0xbd23943eu,
	0xf36e6f75u, 0x0105ec76u, 0x12551f82u, 0xe03e9c81u, 0x34f4f86au, 0xc69f7b69u,
	0xd5cf889du, 0x27a40b9eu, 0x79b737bau, 0x8bdcb4b9u, 0x988c474du, 0x6ae7c44eu,
	0xbe2da0a5u, 0x4c4623a6u, 0x5f16d052u, 0xad7d5351u,
};

uint32_t ingot_crc32c(uint32_t crc, const void *data, size_t n)
{
	const unsigned char *p = (const unsigned char *)data;
	crc = ~crc;
	while (n--)
		crc = crc_table[(crc ^ *p++) & 0xFF] ^ (crc >> 8);
	return ~crc;
}

/* ---- SHA-256 (FIPS 180-4, section 6.2). */

static const uint32_t sha_k[64] = {
	0x428a2f98u, 0x71374491u, 0xb5c0fbcfu, 0xe9b5dba5u, 0x3956c25bu, 0x59f111f1u, 0x923f82a4u, 0xab1c5ed5u,
	0xd807aa98u, 0x12835b01u, 0x243185beu, 0x550c7dc3u, 0x72be5d74u, 0x80deb1feu, 0x9bdc06a7u, 0xc19bf174u,
	0xe49b69c1u, 0xefbe4786u, 0x0fc19dc6u, 0x240ca1ccu, 0x2de92c6fu, 0x4a7484aau, 0x5cb0a9dcu, 0x76f988dau,
	0x983e5152u, 0xa831c66du, 0xb00327c8u, 0xbf597fc7u, 0xc6e00bf3u, 0xd5a79147u, 0x06ca6351u, 0x14292967u,
	0x27b70a85u, 0x2e1b2138u, 0x4d2c6dfcu, 0x53380d13u, 0x650a7354u, 0x766a0abbu, 0x81c2c92eu, 0x92722c85u,
	0xa2bfe8a1u, 0xa81a664bu, 0xc24b8b70u, 0xc76c51a3u, 0xd192e819u, 0xd6990624u, 0xf40e3585u, 0x106aa070u,
	0x19a4c116u, 0x1e376c08u, 0x2748774cu, 0x34b0bcb5u, 0x391c0cb3u, 0x4ed8aa4au, 0x5b9cca4fu, 0x682e6ff3u,
	0x748f82eeu, 0x78a5636fu, 0x84c87814u, 0x8cc70208u, 0x90befffau, 0xa4506cebu, 0xbef9a3f7u, 0xc67178f2u,
};

static uint32_t rotr(uint32_t x, unsigned n) { return (x >> n) | (x << (32 - n)); }

static uint32_t u32be(const unsigned char *p)
{
	return (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | (uint32_t)p[3];
}

static void sha256_block(uint32_t h[8], const unsigned char *p)
{
	uint32_t w[64], a, b, c, d, e, f, g, hh, t1, t2;
	int i;
	for (i = 0; i < 16; i++)
		w[i] = u32be(p + 4 * i);
	for (i = 16; i < 64; i++) {
		uint32_t s0 = rotr(w[i - 15], 7) ^ rotr(w[i - 15], 18) ^ (w[i - 15] >> 3);
		uint32_t s1 = rotr(w[i - 2], 17) ^ rotr(w[i - 2], 19) ^ (w[i - 2] >> 10);
		w[i] = w[i - 16] + s0 + w[i - 7] + s1;
	}
	a = h[0], b = h[1], c = h[2], d = h[3], e = h[4], f = h[5], g = h[6], hh = h[7];
	for (i = 0; i < 64; i++) {
		t1 = hh + (rotr(e, 6) ^ rotr(e, 11) ^ rotr(e, 25)) + ((e & f) ^ (~e & g)) + sha_k[i] + w[i];
		t2 = (rotr(a, 2) ^ rotr(a, 13) ^ rotr(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
		hh = g, g = f, f = e, e = d + t1, d = c, c = b, b = a, a = t1 + t2;
	}
	h[0] += a, h[1] += b, h[2] += c, h[3] += d, h[4] += e, h[5] += f, h[6] += g, h[7] += hh;
}

void ingot_sha256_init(ingot_sha256_ctx *c)
{
	static const uint32_t h0[8] = {0x6a09e667u, 0xbb67ae85u, 0x3c6ef372u, 0xa54ff53au,
	                               0x510e527fu, 0x9b05688cu, 0x1f83d9abu, 0x5be0cd19u};
	memcpy(c->h, h0, sizeof h0);
	c->length = 0;
	c->used = 0;
}

void ingot_sha256_update(ingot_sha256_ctx *c, const void *data, size_t n)
{
	const unsigned char *p = (const unsigned char *)data;
	c->length += n;
	if (c->used > 0) {
		size_t take = 64 - c->used;
		if (take > n)
			take = n;
		memcpy(c->block + c->used, p, take);
		c->used += take, p += take, n -= take;
		if (c->used < 64)
			return;
		sha256_block(c->h, c->block);
		c->used = 0;
	}
	for (; n >= 64; p += 64, n -= 64)
		sha256_block(c->h, p);
	memcpy(c->block, p, n);
	c->used = n;
}

void ingot_sha256_final(ingot_sha256_ctx *c, unsigned char out[32])
{
	uint64_t bits = c->length * 8;
	int i;
	c->block[c->used++] = 0x80;
	if (c->used > 56) {
		memset(c->block + c->used, 0, 64 - c->used);
		sha256_block(c->h, c->block);
		c->used = 0;
	}
	memset(c->block + c->used, 0, 56 - c->used);
	for (i = 0; i < 8; i++)
		c->block[56 + i] = (unsigned char)(bits >> (56 - 8 * i));
	sha256_block(c->h, c->block);
	for (i = 0; i < 8; i++) {
		out[4 * i] = (unsigned char)(c->h[i] >> 24);
		out[4 * i + 1] = (unsigned char)(c->h[i] >> 16);
		out[4 * i + 2] = (unsigned char)(c->h[i] >> 8);
		out[4 * i + 3] = (unsigned char)c->h[i];
	}
}

void ingot_sha256(const void *data, size_t n, unsigned char out[32])
{
	ingot_sha256_ctx c;
	ingot_sha256_init(&c);
	ingot_sha256_update(&c, data, n);
	ingot_sha256_final(&c, out);
}

/* ---- Errors. */

const char *ingot_section_name(uint32_t kind)
{
	switch (kind) {
	case KIND_SUMMARY: return "summary";
	case KIND_BUILD_INFO: return "build info";
	case KIND_WORD_STARTS: return "word starts";
	case KIND_WORD_TEXT: return "word text";
	case KIND_LAST_WORDS: return "last words";
	case KIND_PROBABILITIES: return "probabilities";
	case KIND_BACKOFFS: return "back-offs";
	case KIND_CHILD_STARTS: return "child starts";
	case KIND_SIGNATURE: return "signature";
	case KIND_PROBABILITY_CODEBOOK: return "probability codebook";
	case KIND_BACKOFF_CODEBOOK: return "back-off codebook";
	case KIND_CONTEXTS: return "contexts";
	case KIND_WORD_HASH: return "word hash";
	default: return "unknown";
	}
}

static ingot_status fail(ingot_error *err, ingot_status st, const char *fmt, ...)
{
	if (err) {
		va_list ap;
		err->status = st;
		err->section = -1;
		err->kind = 0;
		err->order = 0;
		va_start(ap, fmt);
		vsnprintf(err->message, sizeof err->message, fmt, ap);
		va_end(ap);
	}
	return st;
}

/* A directory entry (section 3.2). */
typedef struct {
	uint32_t kind, encoding, order, crc;
	uint64_t offset, length;
} entry;

static entry read_entry(const unsigned char *data, uint32_t j)
{
	const unsigned char *p = data + HEADER_SIZE + (size_t)ENTRY_SIZE * j;
	entry e;
	e.kind = u32le(p);
	e.encoding = u32le(p + 4);
	e.order = u32le(p + 8);
	e.crc = u32le(p + 12);
	e.offset = u64le(p + 16);
	e.length = u64le(p + 24);
	return e;
}

/* fail_at reports a problem with section j, naming it "KIND of order K
 * (section J)" in front of the message. */
static ingot_status fail_at(ingot_error *err, ingot_status st, uint32_t j, const entry *e, const char *fmt, ...)
{
	if (err) {
		int used;
		va_list ap;
		err->status = st;
		err->section = (int)j;
		err->kind = e->kind;
		err->order = e->order;
		if (e->order > 0)
			used = snprintf(err->message, sizeof err->message, "%s of order %u (directory entry %u): ",
			                ingot_section_name(e->kind), (unsigned)e->order, (unsigned)j);
		else
			used = snprintf(err->message, sizeof err->message, "%s (directory entry %u): ",
			                ingot_section_name(e->kind), (unsigned)j);
		if (used < 0 || (size_t)used >= sizeof err->message)
			used = 0;
		va_start(ap, fmt);
		vsnprintf(err->message + used, sizeof err->message - (size_t)used, fmt, ap);
		va_end(ap);
	}
	return st;
}

static const unsigned char *section_bytes(const ingot_model *m, const entry *e)
{
	return m->data + (size_t)e->offset;
}

static int crc_matches(const ingot_model *m, const entry *e)
{
	return ingot_crc32c(0, section_bytes(m, e), (size_t)e->length) == e->crc;
}

/* ---- Open (section 6.1). */

/* bits_for returns the smallest B >= 1 with 2^B >= L. */
static uint32_t bits_for(uint32_t L)
{
	uint32_t b = 1;
	while (((uint32_t)1 << b) < L)
		b++;
	return b;
}

/* find: the directory index of the section (kind, order), or -1. */
typedef struct {
	int at[KIND_LAST_DEFINED + 1][INGOT_MAX_ORDER + 1];
} index_table;

static ingot_status open_column(ingot_model *m, ingot_error *err, const index_table *t,
                                uint32_t kind, uint32_t codebook_kind, uint32_t k, uint64_t n, ingot_column_ *col)
{
	int j = t->at[kind][k];
	entry e = read_entry(m->data, (uint32_t)j);
	int cj = t->at[codebook_kind][k];
	memset(col, 0, sizeof *col);
	col->data = section_bytes(m, &e);
	if (e.encoding == ENCODING_PLAIN) {
		if (cj >= 0) {
			entry c = read_entry(m->data, (uint32_t)cj);
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)cj, &c, "a codebook for a column that is not packed");
		}
		if (e.length / 4 != n || e.length % 4 != 0)
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e,
			               "length %llu, want 4 x %llu entries",
			               (unsigned long long)e.length, (unsigned long long)n);
		col->length = e.length;
		return INGOT_OK;
	}
	if (!(e.encoding == ENCODING_PACKED && m->version >= 2) && !(e.encoding == ENCODING_TIERED && m->version >= 3))
		return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e,
		               "encoding %u, which this reader does not know in a version-%u file",
		               (unsigned)e.encoding, (unsigned)m->version);
	if (cj < 0)
		return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "packed column without a %s of its order",
		               ingot_section_name(codebook_kind));
	{
		entry c = read_entry(m->data, (uint32_t)cj);
		uint64_t L = c.length / 4, want;
		uint32_t B;
		if (c.encoding != ENCODING_PLAIN)
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)cj, &c, "encoding %u, which this reader does not know",
			               (unsigned)c.encoding);
		if (c.length % 4 != 0 || L < 1 || L > MAX_CODEBOOK)
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)cj, &c, "length %llu is not 4 x L with 1 <= L <= 65536",
			               (unsigned long long)c.length);
		if (!crc_matches(m, &c))
			return fail_at(err, INGOT_ERR_CHECKSUM, (uint32_t)cj, &c, "checksum mismatch");
		if (e.length < 8)
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "length %llu, shorter than its 8-byte head",
			               (unsigned long long)e.length);
		B = u32le(col->data);
		if (B != bits_for((uint32_t)L))
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "%u bits per index for a codebook of %llu values",
			               (unsigned)B, (unsigned long long)L);
		if (e.encoding == ENCODING_TIERED) {
			/* Section 4.8.6: B, b, E, table, counters, narrow, wide. */
			uint32_t b;
			uint64_t E, T, C, narrow;
			if (e.length < 16)
				return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "length %llu, shorter than its 16-byte head",
				               (unsigned long long)e.length);
			b = u32le(col->data + 4);
			E = u64le(col->data + 8);
			if (b < 1 || b >= B)
				return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "%u narrow bits for %u-bit indexes",
				               (unsigned)b, (unsigned)B);
			if (E > n)
				return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "%llu escaped entries of %llu",
				               (unsigned long long)E, (unsigned long long)n);
			T = ((uint64_t)1 << b) - 1;
			C = (n + 255) / 256;
			narrow = (n * b + 7) / 8;
			want = 16 + 2 * T + 4 * C + narrow + (E * B + 7) / 8; /* n, E < 2^32, B <= 16: no overflow */
			if (e.length != want)
				return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "length %llu, want %llu for a tiered column",
				               (unsigned long long)e.length, (unsigned long long)want);
			col->table = col->data + 16;
			col->counters = col->table + 2 * T;
			col->counter_count = C;
			col->wide = col->counters + 4 * C + narrow;
			col->wide_length = (E * B + 7) / 8;
			col->escapes = E;
			col->narrow_bits = b;
			col->data = col->counters + 4 * C;
			col->length = narrow;
			col->codebook = section_bytes(m, &c);
			col->codebook_length = (uint32_t)L;
			col->bits = B;
			return INGOT_OK;
		}
		want = 8 + (n * B + 7) / 8; /* n < 2^32, B <= 16: no overflow */
		if (e.length != want)
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)j, &e, "length %llu, want %llu for %llu indexes of %u bits",
			               (unsigned long long)e.length, (unsigned long long)want, (unsigned long long)n, (unsigned)B);
		col->data += 8;
		col->length = e.length - 8;
		col->codebook = section_bytes(m, &c);
		col->codebook_length = (uint32_t)L;
		col->bits = B;
	}
	return INGOT_OK;
}

static int ef_get(const ingot_sequence_ *q, uint64_t i, uint64_t *x);

/* word_range returns the bytes of word id, or NULL when its range lies
 * outside the word text (section 6.2). */
static const unsigned char *word_range(const ingot_model *m, uint32_t id, size_t *len)
{
	uint64_t a, b;
	if (id >= m->vocabulary_size)
		return NULL;
	if (m->word_starts_coded) {
		if (!ef_get(&m->word_starts_seq, id, &a) || !ef_get(&m->word_starts_seq, (uint64_t)id + 1, &b))
			return NULL;
	} else {
		a = u32le(m->word_starts + 4 * (size_t)id);
		b = u32le(m->word_starts + 4 * (size_t)id + 4);
	}
	if (a > b || b > m->word_text_length)
		return NULL;
	*len = (size_t)(b - a);
	return m->word_text + a;
}

static int word_is(const ingot_model *m, uint32_t id, const char *want)
{
	size_t len = 0, n = strlen(want);
	const unsigned char *w = word_range(m, id, &len);
	return w != NULL && len == n && memcmp(w, want, n) == 0;
}

/* ---- Version 3: Elias-Fano sequences, contexts, word hash (section 4.8). */

/* popcount64: the number of ones of x. The compiler's builtin where it is
 * one instruction (x86 built with -mpopcnt or -march of a processor that
 * has it, 64-bit ARM); elsewhere the builtin may be a library call that
 * counts through a table (on x86-64 built -O2 without -mpopcnt, scoring
 * took about 1.3 times as long with that call as with the instruction);
 * the arithmetic below avoids the call. */
static unsigned popcount64(uint64_t x)
{
#if (defined(__GNUC__) || defined(__clang__)) && (defined(__POPCNT__) || defined(__aarch64__))
	return (unsigned)__builtin_popcountll(x);
#else
	x = x - ((x >> 1) & 0x5555555555555555ull);
	x = (x & 0x3333333333333333ull) + ((x >> 2) & 0x3333333333333333ull);
	x = (x + (x >> 4)) & 0x0F0F0F0F0F0F0F0Full;
	return (unsigned)((x * 0x0101010101010101ull) >> 56);
#endif
}

/* fold_bytes: the sum of the eight bytes of x, added in 16-bit lanes so
 * that it may exceed 255. */
static uint64_t fold_bytes(uint64_t x)
{
	x = (x & 0x00FF00FF00FF00FFull) + ((x >> 8) & 0x00FF00FF00FF00FFull);
	return (x * 0x0001000100010001ull) >> 48;
}

/* popcount_words: the ones of the 64-bit little-endian words from..to-1
 * of b. Without a popcount instruction the words' byte counts are summed
 * first and folded once (a byte of the sum stays below 256 for up to 31
 * words), about half the arithmetic of one popcount64 per word. */
static uint64_t popcount_words(const unsigned char *b, uint64_t from, uint64_t to)
{
	uint64_t total = 0, w;
#if (defined(__GNUC__) || defined(__clang__)) && (defined(__POPCNT__) || defined(__aarch64__))
	for (w = from; w < to; w++)
		total += (uint64_t)__builtin_popcountll(u64le(b + 8 * (size_t)w));
#else
	uint64_t acc = 0;
	unsigned k = 0;
	for (w = from; w < to; w++) {
		uint64_t x = u64le(b + 8 * (size_t)w);
		x = x - ((x >> 1) & 0x5555555555555555ull);
		x = (x & 0x3333333333333333ull) + ((x >> 2) & 0x3333333333333333ull);
		acc += (x + (x >> 4)) & 0x0F0F0F0F0F0F0F0Full;
		if (++k == 31) {
			total += fold_bytes(acc);
			acc = 0, k = 0;
		}
	}
	total += fold_bytes(acc);
#endif
	return total;
}

/* ctz64: the index of the lowest one of x, which is not 0. */
static unsigned ctz64(uint64_t x)
{
#if defined(__GNUC__) || defined(__clang__)
	return (unsigned)__builtin_ctzll(x);
#else
	unsigned n = 0;
	while (!(x & 1)) {
		x >>= 1;
		n++;
	}
	return n;
#endif
}

/* select64: the position of the r-th one (from 0) of x, which has more
 * than r ones. */
static unsigned select64(uint64_t x, unsigned r)
{
	unsigned pos = 0, c = popcount64(x & 0xFFFFFFFFu);
	if (r >= c)
		r -= c, x >>= 32, pos += 32;
	c = popcount64(x & 0xFFFF);
	if (r >= c)
		r -= c, x >>= 16, pos += 16;
	c = popcount64(x & 0xFF);
	if (r >= c)
		r -= c, x >>= 8, pos += 8;
	while (r-- > 0)
		x &= x - 1;
	return pos + ctz64(x);
}

#define NO_POSITION ((uint64_t)-1)

/* ef_low returns the low bits of value i (i below n). */
static uint64_t ef_low(const ingot_sequence_ *q, uint64_t i)
{
	uint64_t bit, w, v;
	unsigned off, L = q->low_bits;
	if (L == 0)
		return 0;
	bit = i * L;
	w = bit >> 6;
	off = (unsigned)(bit & 63);
	v = u64le(q->low + 8 * (size_t)w) >> off;
	if (off + L > 64 && w + 1 < q->low_words)
		v |= u64le(q->low + 8 * (size_t)(w + 1)) << (64 - off);
	return v & (((uint64_t)1 << L) - 1);
}

/* ef_position returns p_i, the position of the i-th one of the high bits,
 * or NO_POSITION when i is not below n or the file is damaged. */
static uint64_t ef_position(const ingot_sequence_ *q, uint64_t i)
{
	uint64_t p, w, word;
	unsigned r;
	if (i >= q->n)
		return NO_POSITION;
	p = u64le(q->samples + 8 * (size_t)(i >> 8));
	if (p >= q->high_words * 64)
		return NO_POSITION;
	r = (unsigned)(i & 255);
	w = p >> 6;
	word = u64le(q->high + 8 * (size_t)w) & (~(uint64_t)0 << (p & 63));
	for (;;) {
		if (word != 0) { /* popcount64 may be arithmetic: a run of zeros (after a context
		                  * with many children) is passed without it */
			unsigned c = popcount64(word);
			if (r < c)
				return (w << 6) + select64(word, r);
			r -= c;
		}
		if (++w >= q->high_words)
			return NO_POSITION;
		word = u64le(q->high + 8 * (size_t)w);
	}
}

/* ef_next_position returns the position of the first one after p, or
 * NO_POSITION. */
static uint64_t ef_next_position(const ingot_sequence_ *q, uint64_t p)
{
	uint64_t w, word;
	p++;
	w = p >> 6;
	if (w >= q->high_words)
		return NO_POSITION;
	word = u64le(q->high + 8 * (size_t)w) & (~(uint64_t)0 << (p & 63));
	while (word == 0) {
		if (++w >= q->high_words)
			return NO_POSITION;
		word = u64le(q->high + 8 * (size_t)w);
	}
	return (w << 6) + ctz64(word);
}

/* ef_value turns the position of the i-th one into x_i; 0 when damaged. */
static int ef_value(const ingot_sequence_ *q, uint64_t i, uint64_t p, uint64_t *x)
{
	if (p == NO_POSITION || p < i)
		return 0;
	*x = ((p - i) << q->low_bits) | ef_low(q, i);
	return 1;
}

static int ef_get(const ingot_sequence_ *q, uint64_t i, uint64_t *x)
{
	return ef_value(q, i, ef_position(q, i), x);
}

/* ef_find returns the e in [s, t) with x_e = target, or INGOT_NONE; ps is
 * the position of the one of index s (p_s). The
 * values ascend strictly over the range in an intact file; a damaged one
 * gives a wrong answer, never a read outside the sequence. */
static uint32_t ef_find(const ingot_sequence_ *q, uint64_t s, uint64_t t, uint64_t target, uint64_t ps)
{
	uint64_t x;
	if (t - s <= 16) {
		uint64_t p = ps, e;
		for (e = s; e < t; e++) {
			if (e > s)
				p = ef_next_position(q, p);
			if (!ef_value(q, e, p, &x) || x > target)
				return INGOT_NONE;
			if (x == target)
				return (uint32_t)e;
		}
		return INGOT_NONE;
	}
	while (t - s > 1) {
		uint64_t mid = s + (t - s) / 2;
		if (!ef_get(q, mid, &x))
			return INGOT_NONE;
		if (x <= target)
			s = mid;
		else
			t = mid;
	}
	return ef_get(q, s, &x) && x == target ? (uint32_t)s : INGOT_NONE;
}

/* list_key returns the width-bit key at bit of a level's key stream (0
 * past its end). */
static uint64_t list_key(const ingot_level_ *lv, uint64_t bit, unsigned width)
{
	uint64_t at = bit >> 3, v = 0;
	unsigned i;
	if (at + 8 <= lv->key_stream_length)
		v = u64le(lv->key_stream + at);
	else
		for (i = 0; i < 8 && at + i < lv->key_stream_length; i++)
			v |= (uint64_t)lv->key_stream[at + i] << (8 * i);
	return width == 0 ? 0 : (v >> (bit & 7)) & (((uint64_t)1 << width) - 1);
}

/* list_find returns the position of key in the sibling list of count
 * keys held in bits [s0, s1) of a level's key stream (section 4.8.7), or
 * INGOT_NONE. The width is the list's bits over its keys. */
static uint32_t list_find(const ingot_level_ *lv, uint64_t s0, uint64_t s1, uint64_t count, uint64_t key)
{
	uint64_t width, lo = 0, hi = count;
	if (count == 0)
		return INGOT_NONE;
	width = (s1 - s0) / count;
	if (width * count != s1 - s0 || width > 32)
		return INGOT_NONE;
	/* The last key at most key; keys ascend. */
	while (hi - lo > 1) {
		uint64_t mid = lo + (hi - lo) / 2;
		if (list_key(lv, s0 + mid * width, (unsigned)width) <= key)
			lo = mid;
		else
			hi = mid;
	}
	return list_key(lv, s0 + lo * width, (unsigned)width) == key ? (uint32_t)lo : INGOT_NONE;
}

/* coded_list_find returns the position of key in the coded sibling list
 * of count keys held in bits [s0, s1) of a level's key stream (section
 * 4.8.8), or INGOT_NONE. */
static uint32_t coded_list_find(const ingot_level_ *lv, uint64_t s0, uint64_t s1, uint64_t count, uint64_t key)
{
	uint64_t size = s1 - s0, kind, l, smp, low, high, hx, need, pos, i, lo, hi, samples, mask;
	if (count == 0 || s1 < s0)
		return INGOT_NONE;
	if (count == 1)
		return size <= 32 && list_key(lv, s0, (unsigned)size) == key ? 0 : INGOT_NONE;
	if (size < 2)
		return INGOT_NONE;
	kind = list_key(lv, s0, 2);
	if (kind == 2) /* a run: the keys 0 .. count-1 */
		return size == 2 && key < count ? (uint32_t)key : INGOT_NONE;
	if (kind == 0)
		return list_find(lv, s0 + 2, s1, count, key);
	if (kind != 1 || size < 7)
		return INGOT_NONE;
	/* Elias-Fano: L, samples of every 128th key's one, low bits, high bits. */
	l = list_key(lv, s0 + 2, 5);
	samples = (count - 1) / 128;
	smp = s0 + 7;
	low = smp + 32 * samples;
	if (l > 32 || low > s1 || (s1 - low) / count < l + 1)
		return INGOT_NONE;
	high = low + count * l;
	hx = key >> l;
	need = hx;
	pos = high;
	/* The last sample whose key's high part is below hx. */
	lo = 1;
	hi = samples + 1;
	while (lo < hi) {
		uint64_t mid = lo + (hi - lo) / 2, p = list_key(lv, smp + (mid - 1) * 32, 32);
		if (p >= mid * 128 && p - mid * 128 < hx)
			lo = mid + 1;
		else
			hi = mid;
	}
	if (lo > 1) {
		uint64_t j = lo - 1, p = list_key(lv, smp + (j - 1) * 32, 32);
		if (p >= j * 128 && p - j * 128 < hx && high + p < s1) {
			pos = high + p + 1;
			need = hx - (p - j * 128);
		}
	}
	/* Pass need zeros, 56 bits at a time. */
	while (need > 0) {
		uint64_t n, word, zeros;
		if (pos >= s1)
			return INGOT_NONE;
		n = s1 - pos < 56 ? s1 - pos : 56;
		word = ~list_key(lv, pos, (unsigned)n) & (((uint64_t)1 << n) - 1);
		zeros = (uint64_t)popcount64(word);
		if (zeros < need) {
			need -= zeros;
			pos += n;
			continue;
		}
		while (--need > 0)
			word &= word - 1;
		pos += (uint64_t)ctz64(word) + 1;
	}
	i = pos - high - hx;
	mask = ((uint64_t)1 << l) - 1;
	for (; i < count && pos < s1; i++, pos++) {
		uint64_t lb;
		if (list_key(lv, pos, 1) == 0)
			return INGOT_NONE;
		lb = list_key(lv, low + i * l, (unsigned)l);
		if (lb == (key & mask))
			return (uint32_t)i;
		if (lb > (key & mask))
			return INGOT_NONE;
	}
	return INGOT_NONE;
}

/* context_rank tells whether entry i (below n_k) of a level is a context
 * and sets *rank to the number of contexts before it. */
static int context_rank(const ingot_level_ *lv, uint64_t i, uint64_t *rank)
{
	uint64_t word = u64le(lv->context_bits + 8 * (size_t)(i >> 6)), r;
	unsigned bit = (unsigned)(i & 63);
	if (!((word >> bit) & 1))
		return 0;
	r = u32le(lv->context_counts + 4 * (size_t)(i >> 9));
	r += popcount_words(lv->context_bits, (i >> 9) * 8, i >> 6);
	*rank = r + popcount64(word & (((uint64_t)1 << bit) - 1));
	return 1;
}

/* open_sequence checks the head and length of an Elias-Fano section
 * (section 4.8.1) holding want values and points q at its parts. With
 * rest NULL the sequence is the whole section; otherwise it starts the
 * section and *rest is set to the number of bytes after it. */
static ingot_status open_sequence(ingot_model *m, ingot_error *err, uint32_t j, const entry *e, uint64_t want,
                                  ingot_sequence_ *q, uint64_t *rest)
{
	const unsigned char *b = section_bytes(m, e);
	uint64_t n, U, quotient, w_low, w_high, w_samples;
	uint32_t L, wantL = 0;
	if (e->length < 24)
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "length %llu, shorter than its 24-byte head",
		               (unsigned long long)e->length);
	n = u64le(b), U = u64le(b + 8), L = u32le(b + 16);
	if (n != want)
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "%llu values, want %llu", (unsigned long long)n,
		               (unsigned long long)want);
	if (u32le(b + 20) != 0)
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "reserved field is not 0");
	if (n == 0 ? U != 0 : U / n >= ((uint64_t)1 << 32))
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "last value %llu out of range for %llu values",
		               (unsigned long long)U, (unsigned long long)n);
	if (n > 0) {
		quotient = U / n + (U % n == n - 1 ? 1 : 0);
		while (wantL < 63 && ((uint64_t)1 << (wantL + 1)) <= quotient)
			wantL++;
		if (quotient == 0)
			wantL = 0;
	}
	if (L != wantL)
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "%u low bits, want %u", (unsigned)L, (unsigned)wantL);
	w_low = (n * L + 63) / 64;
	w_high = ((U >> L) + n + 63) / 64;
	w_samples = (n + 255) / 256;
	if (rest ? e->length < 24 + 8 * (w_low + w_high + w_samples) : e->length != 24 + 8 * (w_low + w_high + w_samples))
		return fail_at(err, INGOT_ERR_FORMAT, j, e, "length %llu, want %s%llu", (unsigned long long)e->length,
		               rest ? "at least " : "", (unsigned long long)(24 + 8 * (w_low + w_high + w_samples)));
	if (rest)
		*rest = e->length - (24 + 8 * (w_low + w_high + w_samples));
	q->n = n;
	q->low_bits = L;
	q->low = b + 24;
	q->low_words = w_low;
	q->high = q->low + 8 * (size_t)w_low;
	q->high_words = w_high;
	q->samples = q->high + 8 * (size_t)w_high;
	return INGOT_OK;
}

/* open_version3 checks the sections version 3 adds or codes differently
 * (section 6.1, item 10): contexts, child starts, last words, word hash. */
static ingot_status open_version3(ingot_model *m, ingot_error *err, const index_table *t)
{
	uint32_t k, j, N = m->order;
	entry e;
	ingot_status st;
	for (k = 1; k < N; k++) {
		ingot_level_ *lv = &m->levels[k - 1];
		uint64_t n = lv->count, words = (n + 63) / 64, counters = (words + 7) / 8, first;
		const unsigned char *b;
		j = (uint32_t)t->at[KIND_CONTEXTS][k];
		e = read_entry(m->data, j);
		b = section_bytes(m, &e);
		if (e.length < 16 || u64le(b) != n || u64le(b + 8) > n)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "head does not record %llu entries and at most as many contexts",
			               (unsigned long long)n);
		if (e.length != 16 + 8 * words + 4 * counters)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, want %llu", (unsigned long long)e.length,
			               (unsigned long long)(16 + 8 * words + 4 * counters));
		lv->contexts = u64le(b + 8);
		lv->context_bits = b + 16;
		lv->context_counts = b + 16 + 8 * (size_t)words;

		j = (uint32_t)t->at[KIND_CHILD_STARTS][k];
		e = read_entry(m->data, j);
		if (e.encoding != ENCODING_CODED_IDS)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "encoding %u, want 2 in a version-3 file", (unsigned)e.encoding);
		st = open_sequence(m, err, j, &e, lv->contexts + 1, &lv->context_starts, NULL);
		if (st != INGOT_OK)
			return st;
		if (u64le(section_bytes(m, &e) + 8) != m->levels[k].count || !ef_get(&lv->context_starts, 0, &first) ||
		    first != 0)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "starts do not run from 0 to %llu",
			               (unsigned long long)m->levels[k].count);
	}
	for (k = 2; k <= N; k++) {
		ingot_level_ *lv = &m->levels[k - 1];
		j = (uint32_t)t->at[KIND_LAST_WORDS][k];
		e = read_entry(m->data, j);
		if (e.encoding != ENCODING_CODED_IDS && !(e.encoding == ENCODING_CODED_RANKS && k >= 3) &&
		    e.encoding != ENCODING_LIST_IDS && !(e.encoding == ENCODING_LIST_RANKS && k >= 3) &&
		    e.encoding != ENCODING_CODED_LIST_IDS && !(e.encoding == ENCODING_CODED_LIST_RANKS && k >= 3))
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "encoding %u, which a version-3 file does not allow here",
			               (unsigned)e.encoding);
		lv->key_encoding = e.encoding;
		if (e.encoding == ENCODING_LIST_IDS || e.encoding == ENCODING_LIST_RANKS ||
		    e.encoding == ENCODING_CODED_LIST_IDS || e.encoding == ENCODING_CODED_LIST_RANKS) {
			/* Sections 4.8.7 and 4.8.8: the lists' bit starts, then the key stream. */
			uint64_t rest, bits, first;
			st = open_sequence(m, err, j, &e, m->levels[k - 2].contexts + 1, &lv->list_starts, &rest);
			if (st != INGOT_OK)
				return st;
			bits = u64le(section_bytes(m, &e) + 8);
			if (rest != 8 * ((bits + 63) / 64) || !ef_get(&lv->list_starts, 0, &first) || first != 0)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "key stream of %llu bytes for %llu bits, or lists not starting at bit 0",
				               (unsigned long long)rest, (unsigned long long)bits);
			lv->key_stream = section_bytes(m, &e) + (e.length - rest);
			lv->key_stream_length = rest;
		} else {
			st = open_sequence(m, err, j, &e, lv->count, &lv->keys, NULL);
			if (st != INGOT_OK)
				return st;
		}
	}
	{
		uint64_t V = m->vocabulary_size, P = V + V / 4 + 1;
		const unsigned char *b;
		j = (uint32_t)t->at[KIND_WORD_HASH][0];
		e = read_entry(m->data, j);
		b = section_bytes(m, &e);
		if (e.encoding == ENCODING_PACKED_IDS || e.encoding == ENCODING_TAGGED_IDS) {
			uint32_t B = 1, F = 0, head = 8;
			while (B < 32 && (V >> B) != 0)
				B++; /* the smallest B >= 1 with V < 2^B */
			if (e.encoding == ENCODING_TAGGED_IDS) {
				/* section 4.8.4: P, B, F (1..16), reserved 0, slots of B + F bits */
				if (e.length < 16 || u32le(b + 8) < 1 || u32le(b + 8) > 16 || u32le(b + 12) != 0)
					return fail_at(err, INGOT_ERR_FORMAT, j, &e, "want fingerprints of 1 to 16 bits and a zero reserved field");
				F = u32le(b + 8);
				head = 16;
			}
			if (e.length < head || u32le(b) != P || u32le(b + 4) != B || e.length != head + (P * (B + F) + 7) / 8)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "want %llu slots of %u bits and length %llu",
				               (unsigned long long)P, (unsigned)(B + F), (unsigned long long)(head + (P * (B + F) + 7) / 8));
			m->word_slot_bits = B;
			m->word_tag_bits = F;
			m->word_slots = b + head;
			m->word_slot_count = (uint32_t)P;
			return INGOT_OK;
		} else if (e.length < 8 || u32le(b) != P || u32le(b + 4) != 0 || e.length != 8 + 4 * P)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "want %llu slots, a zero reserved field and length %llu",
			               (unsigned long long)P, (unsigned long long)(8 + 4 * P));
		m->word_slots = b + 8;
		m->word_slot_count = (uint32_t)P;
	}
	return INGOT_OK;
}

static ingot_status open_buffer(ingot_model *m, const void *buf, size_t size, ingot_error *err)
{
	const unsigned char *d = (const unsigned char *)buf;
	index_table t;
	uint32_t S, j, k, N, version;
	uint64_t end, prev_end;
	entry e;
	ingot_status st;

	if (m == NULL || (buf == NULL && size > 0))
		return fail(err, INGOT_ERR_ARGUMENT, "no model or no buffer given");
	memset(m, 0, sizeof *m);
	if (err) {
		err->status = INGOT_OK;
		err->section = -1;
		err->kind = err->order = 0;
		err->message[0] = '\0';
	}

	/* 1. Size, magic, version. */
	if (size < HEADER_SIZE || memcmp(d, magic, sizeof magic) != 0)
		return fail(err, INGOT_ERR_FORMAT, "not an ingot model file");
	version = u32le(d + 8);
	if (version < 1 || version > 3)
		return fail(err, INGOT_ERR_VERSION, "file is format version %u; this reader reads versions 1 to 3",
		            (unsigned)version);

	/* 2. Directory in the file, header checksum, file length. */
	S = u32le(d + 12);
	if (S > MAX_SECTIONS)
		return fail(err, INGOT_ERR_FORMAT, "header: %u sections, more than this reader's limit of %d",
		            (unsigned)S, MAX_SECTIONS);
	end = HEADER_SIZE + (uint64_t)ENTRY_SIZE * S;
	if (end > size)
		return fail(err, INGOT_ERR_FORMAT, "header: a directory of %u sections ends at byte %llu, past the file's %llu bytes",
		            (unsigned)S, (unsigned long long)end, (unsigned long long)size);
	{
		uint32_t crc = ingot_crc32c(0, d, 60);
		crc = ingot_crc32c(crc, d + HEADER_SIZE, (size_t)(end - HEADER_SIZE));
		if (crc != u32le(d + 60))
			return fail(err, INGOT_ERR_CHECKSUM, "header: checksum mismatch (header or directory damaged)");
	}
	if (u64le(d + 16) != (uint64_t)size)
		return fail(err, INGOT_ERR_FORMAT, "header: file length field says %llu bytes, the file has %llu (truncated or extended)",
		            (unsigned long long)u64le(d + 16), (unsigned long long)size);

	m->data = d;
	m->size = size;
	m->version = version;
	m->sections = S;

	/* 3. Placement; 4. which sections there are. */
	memset(&t, 0xFF, sizeof t); /* every index -1 */
	prev_end = end;
	{
		int signatures = 0;
		for (j = 0; j < S; j++) {
			e = read_entry(d, j);
			if (e.offset % 8 != 0)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "offset %llu is not a multiple of 8",
				               (unsigned long long)e.offset);
			if (e.offset < prev_end)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "offset %llu overlaps what comes before it (ends at %llu)",
				               (unsigned long long)e.offset, (unsigned long long)prev_end);
			if (e.offset > size || e.length > size - e.offset)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "bytes %llu + %llu run past the file's end at %llu",
				               (unsigned long long)e.offset, (unsigned long long)e.length, (unsigned long long)size);
			if (e.order > INGOT_MAX_ORDER)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "order %u is above %d", (unsigned)e.order, INGOT_MAX_ORDER);
			prev_end = e.offset + e.length;
			if (e.kind == 0 || e.kind > KIND_LAST_DEFINED)
				continue; /* unknown kinds are ignored */
			if (e.kind == KIND_SIGNATURE) {
				if (e.order != 0 || ++signatures > 1)
					return fail_at(err, INGOT_ERR_FORMAT, j, &e, "a second signature, or one with an order");
				continue;
			}
			if (t.at[e.kind][e.order] >= 0)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "listed twice (also directory entry %d)",
				               t.at[e.kind][e.order]);
			t.at[e.kind][e.order] = (int)j;
		}
	}

	/* 5. The summary. */
	if (t.at[KIND_SUMMARY][0] < 0)
		return fail(err, INGOT_ERR_FORMAT, "no summary section");
	j = (uint32_t)t.at[KIND_SUMMARY][0];
	e = read_entry(d, j);
	if (e.encoding != ENCODING_PLAIN)
		return fail_at(err, INGOT_ERR_FORMAT, j, &e, "encoding %u, which this reader does not know", (unsigned)e.encoding);
	if (!crc_matches(m, &e))
		return fail_at(err, INGOT_ERR_CHECKSUM, j, &e, "checksum mismatch");
	if (e.length < 24)
		return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, shorter than 24", (unsigned long long)e.length);
	{
		const unsigned char *s = section_bytes(m, &e);
		N = u32le(s);
		if (N < 1 || N > INGOT_MAX_ORDER)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "order %u is not in 1..%d", (unsigned)N, INGOT_MAX_ORDER);
		if (e.length != 24 + 8 * (uint64_t)N)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, want %u for order %u",
			               (unsigned long long)e.length, (unsigned)(24 + 8 * N), (unsigned)N);
		m->order = N;
		m->vocabulary_size = u32le(s + 4);
		m->start_id = u32le(s + 8);
		m->end_id = u32le(s + 12);
		m->unknown_id = u32le(s + 16);
		m->flags = u32le(s + 20);
		if (m->vocabulary_size == 0xFFFFFFFFu)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "vocabulary size 0xFFFFFFFF is not allowed");
		if (m->start_id >= m->vocabulary_size || m->end_id >= m->vocabulary_size ||
		    m->unknown_id >= m->vocabulary_size)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "a marker id is not below the vocabulary size %u",
			               (unsigned)m->vocabulary_size);
		for (k = 1; k <= N; k++) {
			uint64_t n = u64le(s + 24 + 8 * (size_t)(k - 1));
			if (n > 0xFFFFFFFFu)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "%llu entries of order %u, above 2^32-1",
				               (unsigned long long)n, (unsigned)k);
			m->levels[k - 1].count = n;
		}
		if (m->levels[0].count != m->vocabulary_size)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "%llu unigrams for a vocabulary of %u words",
			               (unsigned long long)m->levels[0].count, (unsigned)m->vocabulary_size);
	}

	/* 4. Every section the order needs, once; none whose order does not fit. */
	for (j = 0; j < S; j++) {
		uint32_t lo = 0, hi = 0;
		e = read_entry(d, j);
		switch (e.kind) {
		case KIND_SUMMARY: case KIND_BUILD_INFO: case KIND_WORD_STARTS: case KIND_WORD_TEXT: case KIND_SIGNATURE:
			lo = hi = 0;
			break;
		case KIND_LAST_WORDS: lo = 2, hi = N; break;
		case KIND_PROBABILITIES: case KIND_PROBABILITY_CODEBOOK: lo = 1, hi = N; break;
		case KIND_BACKOFFS: case KIND_CHILD_STARTS: case KIND_BACKOFF_CODEBOOK: case KIND_CONTEXTS:
			lo = 1, hi = N - 1;
			break;
		case KIND_WORD_HASH: lo = hi = 0; break;
		default: continue;
		}
		if ((e.kind == KIND_CONTEXTS || e.kind == KIND_WORD_HASH) && version < 3)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "a version-3 section in a version-%u file", (unsigned)version);
		if (e.order < lo || e.order > hi)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "order %u does not fit a model of order %u",
			               (unsigned)e.order, (unsigned)N);
		if (version >= 3 && (e.kind == KIND_LAST_WORDS || e.kind == KIND_CHILD_STARTS))
			continue; /* coded: checked below */
		if (version >= 3 && ((e.kind == KIND_WORD_STARTS && e.encoding == ENCODING_CODED_IDS) ||
		                     (e.kind == KIND_WORD_HASH && (e.encoding == ENCODING_PACKED_IDS ||
		                                                     e.encoding == ENCODING_TAGGED_IDS))))
			continue; /* section 4.8.4, 4.8.5: checked below */
		if (e.kind != KIND_PROBABILITIES && e.kind != KIND_BACKOFFS && e.kind != KIND_SIGNATURE &&
		    e.encoding != ENCODING_PLAIN)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "encoding %u, which this reader does not know",
			               (unsigned)e.encoding);
	}
	{
		static const uint32_t whole[] = {KIND_BUILD_INFO, KIND_WORD_STARTS, KIND_WORD_TEXT};
		size_t i;
		for (i = 0; i < sizeof whole / sizeof whole[0]; i++)
			if (t.at[whole[i]][0] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no %s section", ingot_section_name(whole[i]));
		for (k = 1; k <= N; k++) {
			if (k >= 2 && t.at[KIND_LAST_WORDS][k] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no last words section of order %u", (unsigned)k);
			if (t.at[KIND_PROBABILITIES][k] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no probabilities section of order %u", (unsigned)k);
			if (k < N && t.at[KIND_BACKOFFS][k] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no back-offs section of order %u", (unsigned)k);
			if (k < N && t.at[KIND_CHILD_STARTS][k] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no child starts section of order %u", (unsigned)k);
			if (version >= 3 && k < N && t.at[KIND_CONTEXTS][k] < 0)
				return fail(err, INGOT_ERR_FORMAT, "no contexts section of order %u", (unsigned)k);
		}
		if (version >= 3 && t.at[KIND_WORD_HASH][0] < 0)
			return fail(err, INGOT_ERR_FORMAT, "no word hash section");
	}

	/* 7. Column lengths; 8. the ends of the starts arrays. */
	{
		uint64_t V = m->vocabulary_size;
		j = (uint32_t)t.at[KIND_WORD_STARTS][0];
		e = read_entry(d, j);
		if (e.encoding == ENCODING_CODED_IDS) {
			entry w = read_entry(d, (uint32_t)t.at[KIND_WORD_TEXT][0]);
			uint64_t first = 1;
			st = open_sequence(m, err, j, &e, V + 1, &m->word_starts_seq, NULL);
			if (st != INGOT_OK)
				return st;
			m->word_starts_coded = 1;
			m->word_text = section_bytes(m, &w);
			m->word_text_length = w.length;
			if (!ef_get(&m->word_starts_seq, 0, &first) || first != 0 ||
			    u64le(section_bytes(m, &e) + 8) != w.length)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "starts do not run from 0 to the word text's %llu bytes",
				               (unsigned long long)w.length);
		} else if (e.length / 4 != V + 1 || e.length % 4 != 0)
			return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, want 4 x %llu",
			               (unsigned long long)e.length, (unsigned long long)(V + 1));
		else {
			m->word_starts = section_bytes(m, &e);
			entry w = read_entry(d, (uint32_t)t.at[KIND_WORD_TEXT][0]);
			m->word_text = section_bytes(m, &w);
			m->word_text_length = w.length;
			if (u32le(m->word_starts) != 0 || u32le(m->word_starts + 4 * (size_t)V) != w.length)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "starts run from %u to %u, want 0 to the word text's %llu bytes",
				               (unsigned)u32le(m->word_starts), (unsigned)u32le(m->word_starts + 4 * (size_t)V),
				               (unsigned long long)w.length);
		}
	}
	if (version >= 3) {
		st = open_version3(m, err, &t);
		if (st != INGOT_OK)
			return st;
	}
	for (k = 1; k <= N; k++) {
		ingot_level_ *lv = &m->levels[k - 1];
		uint64_t n = lv->count;
		if (k >= 2 && version < 3) {
			j = (uint32_t)t.at[KIND_LAST_WORDS][k];
			e = read_entry(d, j);
			if (e.length / 4 != n || e.length % 4 != 0)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, want 4 x %llu",
				               (unsigned long long)e.length, (unsigned long long)n);
			lv->last_words = section_bytes(m, &e);
		}
		st = open_column(m, err, &t, KIND_PROBABILITIES, KIND_PROBABILITY_CODEBOOK, k, n, &lv->probabilities);
		if (st != INGOT_OK)
			return st;
		if (k < N) {
			/* Version 3 stores back-off weights for the contexts only. */
			st = open_column(m, err, &t, KIND_BACKOFFS, KIND_BACKOFF_CODEBOOK, k,
			                 version >= 3 ? lv->contexts : n, &lv->backoffs);
			if (st != INGOT_OK)
				return st;
			if (version >= 3)
				continue;
			j = (uint32_t)t.at[KIND_CHILD_STARTS][k];
			e = read_entry(d, j);
			if (e.length / 4 != n + 1 || e.length % 4 != 0)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "length %llu, want 4 x %llu",
				               (unsigned long long)e.length, (unsigned long long)(n + 1));
			lv->child_starts = section_bytes(m, &e);
			if (u32le(lv->child_starts) != 0 || u32le(lv->child_starts + 4 * (size_t)n) != m->levels[k].count)
				return fail_at(err, INGOT_ERR_FORMAT, j, &e, "starts run from %u to %u, want 0 to %llu",
				               (unsigned)u32le(lv->child_starts), (unsigned)u32le(lv->child_starts + 4 * (size_t)n),
				               (unsigned long long)m->levels[k].count);
		}
	}
	/* Codebooks of orders or kinds with no packed column. */
	for (k = 1; k <= N; k++) {
		int cj = t.at[KIND_PROBABILITY_CODEBOOK][k];
		if (cj >= 0 && m->levels[k - 1].probabilities.bits == 0) {
			e = read_entry(d, (uint32_t)cj);
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)cj, &e, "a codebook for a column that is not packed");
		}
		cj = t.at[KIND_BACKOFF_CODEBOOK][k];
		if (cj >= 0 && (k >= N || m->levels[k - 1].backoffs.bits == 0)) {
			e = read_entry(d, (uint32_t)cj);
			return fail_at(err, INGOT_ERR_FORMAT, (uint32_t)cj, &e, "a codebook for a column that is not packed");
		}
	}

	/* 9. The markers. */
	if (!word_is(m, m->start_id, "<s>") || !word_is(m, m->end_id, "</s>") || !word_is(m, m->unknown_id, "<unk>"))
		return fail(err, INGOT_ERR_FORMAT, "vocabulary: the marker ids do not hold <s>, </s> and <unk>");
	return INGOT_OK;
}

ingot_status ingot_open_buffer(ingot_model *m, const void *data, size_t size, ingot_error *err)
{
	ingot_status st = open_buffer(m, data, size, err);
	if (st != INGOT_OK && m != NULL)
		memset(m, 0, sizeof *m); /* nothing half-open */
	return st;
}

void ingot_close(ingot_model *m)
{
	if (m == NULL)
		return;
#ifdef INGOT_HAVE_MMAP
	if (m->mapped && m->data != NULL)
		munmap((void *)m->data, m->size);
#endif
	memset(m, 0, sizeof *m);
}

ingot_status ingot_open_file(ingot_model *m, const char *path, ingot_error *err)
{
#ifdef INGOT_HAVE_MMAP
	int fd;
	struct stat sb;
	void *p = NULL;
	size_t size;
	ingot_status st;
	if (m == NULL || path == NULL)
		return fail(err, INGOT_ERR_ARGUMENT, "no model or no path given");
	memset(m, 0, sizeof *m);
	fd = open(path, O_RDONLY);
	if (fd < 0)
		return fail(err, INGOT_ERR_IO, "%s: %s", path, strerror(errno));
	if (fstat(fd, &sb) != 0) {
		int e = errno;
		close(fd);
		return fail(err, INGOT_ERR_IO, "%s: %s", path, strerror(e));
	}
	if (!S_ISREG(sb.st_mode)) {
		close(fd);
		return fail(err, INGOT_ERR_IO, "%s: not a regular file", path);
	}
	if ((uint64_t)sb.st_size > (uint64_t)(size_t)-1) {
		close(fd);
		return fail(err, INGOT_ERR_IO, "%s: %llu bytes do not fit this machine's address space", path,
		            (unsigned long long)sb.st_size);
	}
	size = (size_t)sb.st_size;
	if (size > 0) {
		p = mmap(NULL, size, PROT_READ, MAP_PRIVATE, fd, 0);
		if (p == MAP_FAILED) {
			int e = errno;
			close(fd);
			return fail(err, INGOT_ERR_IO, "%s: mapping: %s", path, strerror(e));
		}
	}
	close(fd);
	st = ingot_open_buffer(m, p, size, err);
	if (st != INGOT_OK) {
		if (p != NULL)
			munmap(p, size);
		if (err) {
			/* Name the file in front of the message, keeping the
			 * section fields. */
			ingot_error was = *err;
			fail(err, st, "%s: %s", path, was.message);
			err->section = was.section;
			err->kind = was.kind;
			err->order = was.order;
		}
		return st;
	}
	m->mapped = 1;
	return INGOT_OK;
#else
	(void)path;
	if (m != NULL)
		memset(m, 0, sizeof *m);
	return fail(err, INGOT_ERR_IO, "this build cannot map files: read the file into a buffer and use ingot_open_buffer");
#endif
}

/* ---- Full check (section 6.3, checksums, padding and digest). */

static int all_zero(const unsigned char *p, uint64_t n)
{
	uint64_t i;
	for (i = 0; i < n; i++)
		if (p[i] != 0)
			return 0;
	return 1;
}

ingot_status ingot_check(const ingot_model *m, ingot_error *err)
{
	uint32_t j;
	uint64_t at;
	entry e;
	ingot_sha256_ctx sha;
	unsigned char digest[32];
	if (m == NULL || m->data == NULL)
		return fail(err, INGOT_ERR_ARGUMENT, "no open model given");
	/* The checksums and the padding first: they name the damaged part. */
	at = HEADER_SIZE + (uint64_t)ENTRY_SIZE * m->sections;
	for (j = 0; j < m->sections; j++) {
		e = read_entry(m->data, j);
		if (!all_zero(m->data + at, e.offset - at))
			return fail_at(err, INGOT_ERR_CHECKSUM, j, &e, "the padding before it is not zero");
		if (!crc_matches(m, &e))
			return fail_at(err, INGOT_ERR_CHECKSUM, j, &e, "checksum mismatch");
		at = e.offset + e.length;
	}
	if (m->size - at >= 8 || !all_zero(m->data + at, m->size - at))
		return fail(err, INGOT_ERR_CHECKSUM, "end of file: %llu bytes after the last section, want fewer than 8 zero bytes",
		            (unsigned long long)(m->size - at));
	/* Then the content digest (section 5). */
	ingot_sha256_init(&sha);
	for (j = 0; j < m->sections; j++) {
		unsigned char rec[20];
		int i;
		e = read_entry(m->data, j);
		if (e.kind == KIND_SIGNATURE)
			continue;
		for (i = 0; i < 4; i++) {
			rec[i] = (unsigned char)(e.kind >> 8 * i);
			rec[4 + i] = (unsigned char)(e.encoding >> 8 * i);
			rec[8 + i] = (unsigned char)(e.order >> 8 * i);
		}
		for (i = 0; i < 8; i++)
			rec[12 + i] = (unsigned char)(e.length >> 8 * i);
		ingot_sha256_update(&sha, rec, sizeof rec);
		ingot_sha256_update(&sha, section_bytes(m, &e), (size_t)e.length);
	}
	ingot_sha256_final(&sha, digest);
	if (memcmp(digest, m->data + 24, 32) != 0)
		return fail(err, INGOT_ERR_CHECKSUM, "content digest: SHA-256 of the sections does not match the header's");
	if (err) {
		err->status = INGOT_OK;
		err->section = -1;
		err->message[0] = '\0';
	}
	return INGOT_OK;
}

/* ---- Facts. */

uint32_t ingot_order(const ingot_model *m) { return m->order; }
uint32_t ingot_version(const ingot_model *m) { return m->version; }
uint32_t ingot_vocabulary_size(const ingot_model *m) { return m->vocabulary_size; }
uint32_t ingot_start_id(const ingot_model *m) { return m->start_id; }
uint32_t ingot_end_id(const ingot_model *m) { return m->end_id; }
uint32_t ingot_unknown_id(const ingot_model *m) { return m->unknown_id; }

uint64_t ingot_count(const ingot_model *m, uint32_t order)
{
	if (order < 1 || order > m->order)
		return 0;
	return m->levels[order - 1].count;
}

/* ---- Words (section 7, word to id). */

const char *ingot_word(const ingot_model *m, uint32_t id, size_t *len)
{
	size_t n = 0;
	const unsigned char *w = word_range(m, id, &n);
	if (len)
		*len = w ? n : 0;
	return (const char *)w;
}

/* compare_word orders the stored word id against key bytewise; a word whose
 * range is damaged sorts as the empty string and never matches. */
static int compare_word(const ingot_model *m, uint32_t id, const unsigned char *key, size_t klen, int *valid)
{
	size_t n = 0, min;
	const unsigned char *w = word_range(m, id, &n);
	int c;
	*valid = w != NULL;
	if (w == NULL)
		return klen > 0 ? -1 : 1;
	min = n < klen ? n : klen;
	c = min > 0 ? memcmp(w, key, min) : 0;
	if (c != 0)
		return c;
	return n < klen ? -1 : n > klen ? 1 : 0;
}

/* word_slot returns the id in slot i of the word hash, 0xFFFFFFFF when
 * empty, and stores its fingerprint in *tag: a u32 (encoding 0), or
 * B + F bits read as a packed index, the id in the low B bits and the
 * fingerprint in the F bits above (encodings 4 and 5, F = 0 for 4;
 * section 4.8.4; bytes past the section read as 0). */
static uint32_t word_slot(const ingot_model *m, uint32_t i, uint32_t *tag)
{
	uint32_t B = m->word_slot_bits, W = B + m->word_tag_bits;
	uint64_t bit, at, end, word = 0, v, j, mask;
	*tag = 0;
	if (B == 0)
		return u32le(m->word_slots + 4 * (size_t)i);
	bit = (uint64_t)i * W;
	at = bit >> 3;
	end = ((uint64_t)m->word_slot_count * W + 7) / 8;
	for (j = 0; j < 8 && at + j < end; j++)
		word |= (uint64_t)m->word_slots[at + j] << (8 * j);
	v = (word >> (bit & 7)) & (((uint64_t)1 << W) - 1);
	mask = ((uint64_t)1 << B) - 1;
	*tag = (uint32_t)(v >> B);
	return (v & mask) == mask ? 0xFFFFFFFFu : (uint32_t)(v & mask);
}

/* lookup_hash finds a word through the word hash of a version-3 file
 * (section 4.8.4): 64-bit FNV-1a, linear probing, at most P probes; with
 * fingerprints (encoding 5) a slot whose fingerprint is not the word's,
 * the top F bits of its hash, is passed over without reading its word. */
static int lookup_hash(const ingot_model *m, const unsigned char *key, size_t len, uint32_t *id)
{
	uint64_t h = 14695981039346656037ull;
	uint32_t P = m->word_slot_count, F = m->word_tag_bits, slot, probes, want = 0;
	size_t i;
	for (i = 0; i < len; i++)
		h = (h ^ key[i]) * 1099511628211ull;
	if (F > 0)
		want = (uint32_t)(h >> (64 - F));
	slot = (uint32_t)(h % P);
	for (probes = 0; probes < P; probes++) {
		uint32_t tag, w = word_slot(m, slot, &tag);
		size_t n = 0;
		const unsigned char *text;
		if (w == 0xFFFFFFFFu)
			return 0;
		if (tag != want) {
			if (++slot == P)
				slot = 0;
			continue;
		}
		text = word_range(m, w, &n);
		if (text != NULL && n == len && (len == 0 || memcmp(text, key, len) == 0)) {
			if (id)
				*id = w;
			return 1;
		}
		if (++slot == P)
			slot = 0;
	}
	return 0;
}

int ingot_lookup(const ingot_model *m, const char *word, size_t len, uint32_t *id)
{
	uint32_t lo = 0, hi = m->vocabulary_size;
	const unsigned char *key = (const unsigned char *)word;
	if (m->version >= 3)
		return lookup_hash(m, key, len, id);
	while (lo < hi) {
		uint32_t mid = lo + (hi - lo) / 2;
		int valid, c = compare_word(m, mid, key, len, &valid);
		if (c == 0 && valid) {
			if (id)
				*id = mid;
			return 1;
		}
		if (c < 0)
			lo = mid + 1;
		else
			hi = mid;
	}
	return 0;
}

/* ---- Queries (section 7). */

void ingot_empty_context(const ingot_model *m, ingot_state *s)
{
	(void)m;
	memset(s, 0, sizeof *s);
}

void ingot_begin_sentence(const ingot_model *m, ingot_state *s)
{
	memset(s, 0, sizeof *s);
	if (m->order >= 2) {
		s->length = 1;
		s->entry[0] = m->start_id;
	}
}

/* packed_at reads value i of a stream of width-bit values (section 4.5),
 * bytes past its length reading as 0. */
static uint32_t packed_at(const unsigned char *data, uint64_t length, uint64_t i, uint32_t width)
{
	uint64_t bit = i * width, w = 0;
	size_t at = (size_t)(bit >> 3);
	if (at + 8 <= length) {
		w = u64le(data + at);
	} else {
		unsigned b;
		for (b = 0; at + b < length; b++)
			w |= (uint64_t)data[at + b] << (8 * b);
	}
	return (uint32_t)(w >> (bit & 7)) & (((uint32_t)1 << width) - 1);
}

/* tiered_index reads the codebook index of entry i of a tiered column
 * (section 4.8.6), or UINT32_MAX when the column is damaged. */
static uint32_t tiered_index(const ingot_column_ *c, uint64_t i)
{
	uint32_t escape = ((uint32_t)1 << c->narrow_bits) - 1;
	uint32_t s = packed_at(c->data, c->length, i, c->narrow_bits);
	uint64_t r, j;
	if (s != escape)
		return (uint32_t)c->table[2 * (size_t)s] | (uint32_t)c->table[2 * (size_t)s + 1] << 8;
	if (i / 256 >= c->counter_count)
		return UINT32_MAX;
	r = u32le(c->counters + 4 * (size_t)(i / 256));
	j = i / 256 * 256;
	if (c->narrow_bits == 8 && i <= c->length) {
		/* Byte-wide values, eight at a time: a byte is 0xFF exactly when
		 * its complement is zero, and the high bit of each byte of y is
		 * clear exactly when that byte of x is zero (the low seven bits
		 * of each byte are added to 0x7F alone: no carry crosses bytes). */
		const uint64_t high = 0x8080808080808080ull;
		for (; j + 8 <= i; j += 8) {
			uint64_t x = ~u64le(c->data + (size_t)j);
			uint64_t y = ((x & ~high) + ~high) | x;
			r += popcount64(~y & high);
		}
	}
	for (; j < i; j++)
		if (packed_at(c->data, c->length, j, c->narrow_bits) == escape)
			r++;
	if (r >= c->escapes)
		return UINT32_MAX;
	return packed_at(c->wide, c->wide_length, r, c->bits);
}

/* value reads entry i of a column (i below the order's count). */
static double value(const ingot_column_ *c, uint64_t i)
{
	uint32_t idx;
	if (c->bits == 0)
		return (double)f32le(c->data + 4 * (size_t)i);
	if (c->narrow_bits != 0)
		idx = tiered_index(c, i);
	else
		idx = packed_at(c->data, c->length, i, c->bits);
	if (idx >= c->codebook_length)
		return NAN; /* a damaged file */
	return (double)f32le(c->codebook + 4 * (size_t)idx);
}

/* find_child returns the entry of order k+1 whose parent is entry parent of
 * order k and whose last word is w, or INGOT_NONE. It trusts no stored
 * value (section 6.2): the child range is clipped to n_{k+1}. */
static uint32_t find_child(const ingot_model *m, uint32_t k, uint32_t parent, uint32_t w)
{
	const ingot_level_ *lv = &m->levels[k - 1];
	const unsigned char *lw = m->levels[k].last_words;
	uint32_t lo, hi, n;
	if (parent >= lv->count)
		return INGOT_NONE;
	lo = u32le(lv->child_starts + 4 * (size_t)parent);
	hi = u32le(lv->child_starts + 4 * (size_t)parent + 4);
	if (hi > m->levels[k].count)
		hi = (uint32_t)m->levels[k].count;
	if (lo >= hi)
		return INGOT_NONE;
	/* The last child whose word is at most w; the children's words
	 * ascend. */
	n = hi - lo;
	while (n > 1) {
		uint32_t half = n / 2;
		lo = u32le(lw + 4 * (size_t)(lo + half)) <= w ? lo + half : lo;
		n -= half;
	}
	return u32le(lw + 4 * (size_t)lo) == w ? lo : INGOT_NONE;
}

/* next_version3 is ingot_next over the succinct trie ("Running text in
 * version 3", section 7). */
static double next_version3(const ingot_model *m, ingot_state *s, uint32_t w)
{
	uint32_t found[INGOT_MAX_ORDER]; /* found[j]: the entry of order j+1 storing h_j w */
	uint64_t first[INGOT_MAX_ORDER]; /* first[j]: the first child of h_j */
	uint64_t rank[INGOT_MAX_ORDER];  /* rank[j]: h_j's rank among the contexts, or NO_POSITION */
	uint32_t n = s->length, j, keep;
	double weight = 0, lp = -INFINITY;
	if (n > m->order - 1)
		n = m->order - 1;
	if (w >= m->vocabulary_size) {
		s->length = 0;
		return -INFINITY;
	}
	found[0] = w;
	first[0] = 0;
	for (j = 1; j <= n; j++) {
		const ingot_level_ *lv = &m->levels[j - 1], *next = &m->levels[j];
		uint64_t e = s->entry[j - 1], a, b, key;
		found[j] = INGOT_NONE;
		rank[j] = NO_POSITION;
		if (e >= lv->count || !context_rank(lv, e, &rank[j]))
			continue; /* not stored, or stored without children */
		{
			/* Two neighbouring values: one select, then the next one. */
			uint64_t p = ef_position(&lv->context_starts, rank[j]);
			if (!ef_value(&lv->context_starts, rank[j], p, &a) ||
			    !ef_value(&lv->context_starts, rank[j] + 1, ef_next_position(&lv->context_starts, p), &b))
				continue;
		}
		if (b > next->count)
			b = next->count;
		if (a >= b)
			continue;
		if (next->key_encoding == ENCODING_CODED_RANKS || next->key_encoding == ENCODING_LIST_RANKS ||
		    next->key_encoding == ENCODING_CODED_LIST_RANKS) {
			if (found[j - 1] == INGOT_NONE)
				continue; /* h_{j-1} w is not stored, so neither is h_j w */
			key = found[j - 1] - first[j - 1];
		} else
			key = w;
		if (next->key_encoding >= ENCODING_LIST_IDS) {
			/* The keys of h_j's list: same rank as its child start. */
			uint64_t p = ef_position(&next->list_starts, rank[j]), s0, s1;
			if (!ef_value(&next->list_starts, rank[j], p, &s0) ||
			    !ef_value(&next->list_starts, rank[j] + 1, ef_next_position(&next->list_starts, p), &s1) || s1 < s0)
				continue;
			if (next->key_encoding >= ENCODING_CODED_LIST_IDS)
				found[j] = coded_list_find(next, s0, s1, b - a, key);
			else
				found[j] = list_find(next, s0, s1, b - a, key);
			if (found[j] != INGOT_NONE)
				found[j] += (uint32_t)a;
		} else {
			/* The keys under h_j are offsets from x_{a-1}. */
			uint64_t base = 0, pa;
			if (a > 0) {
				uint64_t p = ef_position(&next->keys, a - 1);
				if (!ef_value(&next->keys, a - 1, p, &base))
					continue;
				pa = ef_next_position(&next->keys, p);
			} else
				pa = ef_position(&next->keys, 0);
			found[j] = ef_find(&next->keys, a, b, base + key, pa);
		}
		first[j] = a;
	}
	for (j = n;; j--) {
		if (found[j] != INGOT_NONE) {
			lp = weight + value(&m->levels[j].probabilities, found[j]);
			break;
		}
		/* A stored h_j that is not a context has weight 1 (log10 0). */
		if (rank[j] < m->levels[j - 1].contexts)
			weight += value(&m->levels[j - 1].backoffs, rank[j]);
	}
	keep = n + 1 < m->order - 1 ? n + 1 : m->order - 1;
	for (j = 0; j < keep; j++)
		s->entry[j] = found[j];
	s->length = keep;
	return lp;
}

double ingot_next(const ingot_model *m, ingot_state *s, uint32_t w)
{
	uint32_t found[INGOT_MAX_ORDER]; /* found[j]: the entry of order j+1 storing h_j w */
	uint32_t n = s->length, j, keep;
	double weight = 0, lp = -INFINITY;
	if (m->version >= 3)
		return next_version3(m, s, w);
	if (n > m->order - 1)
		n = m->order - 1;
	if (w >= m->vocabulary_size) {
		s->length = 0;
		return -INFINITY;
	}
	found[0] = w;
	for (j = 1; j <= n; j++)
		found[j] = find_child(m, j, s->entry[j - 1], w);
	for (j = n;; j--) {
		if (found[j] != INGOT_NONE) {
			lp = weight + value(&m->levels[j].probabilities, found[j]);
			break;
		}
		/* j > 0 here: found[0] is always stored. */
		if (s->entry[j - 1] < m->levels[j - 1].count)
			weight += value(&m->levels[j - 1].backoffs, s->entry[j - 1]);
	}
	keep = n + 1 < m->order - 1 ? n + 1 : m->order - 1;
	for (j = 0; j < keep; j++)
		s->entry[j] = found[j];
	s->length = keep;
	return lp;
}
