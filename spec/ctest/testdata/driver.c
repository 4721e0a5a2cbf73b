/*
 * driver.c: a test and benchmark driver for the C reader (spec/c), built by
 * the Go tests in spec/ctest together with spec/c/ingot.c. Modes:
 *
 *   driver vectors
 *       prints, one per line, CRC-32C and SHA-256 values of fixed inputs
 *       (the Go test compares them with published test vectors).
 *   driver query [--buffer] MODEL < QUERIES
 *       each input line is "CONTEXT WORDS<TAB>WORD"; prints log10
 *       P(WORD | CONTEXT) as %.17g, starting from the empty context. Words
 *       outside the vocabulary are looked up as <unk>. --buffer reads the
 *       file into memory and opens it with ingot_open_buffer.
 *   driver damage MODEL SEED < TEXT
 *       damages in-memory copies of MODEL: every single-bit flip, every
 *       truncation, and random overwrites of 32-bit values inside sections
 *       (then with every checksum and the digest recomputed, so that only
 *       the bounds checks stand between the reader and the damage), and
 *       random header and directory fields, resealed likewise. Each
 *       copy is opened, checked, and, checks or not, used: every word
 *       looked up and TEXT scored. Prints one line per kind of damage:
 *       "KIND tried N refused_at_open R refused_by_check C".
 *   driver bench MODEL ROUNDS < TEXT
 *       maps TEXT to ids, then scores it ROUNDS times with ingot_next and
 *       prints "words N ns_per_word X" (the median of the rounds).
 */
#define _POSIX_C_SOURCE 200809L

#include "ingot.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static unsigned char *read_all(FILE *f, size_t *size)
{
	size_t cap = 1 << 16, n = 0, got;
	unsigned char *b = malloc(cap);
	if (!b)
		return NULL;
	while ((got = fread(b + n, 1, cap - n, f)) > 0) {
		n += got;
		if (n == cap) {
			unsigned char *bigger = realloc(b, cap * 2);
			if (!bigger) {
				free(b);
				return NULL;
			}
			b = bigger;
			cap *= 2;
		}
	}
	*size = n;
	return b;
}

static unsigned char *read_file(const char *path, size_t *size)
{
	FILE *f = fopen(path, "rb");
	unsigned char *b;
	if (!f) {
		perror(path);
		exit(2);
	}
	b = read_all(f, size);
	fclose(f);
	if (!b) {
		fprintf(stderr, "%s: out of memory\n", path);
		exit(2);
	}
	return b;
}

static void hex(const unsigned char *p, size_t n)
{
	size_t i;
	for (i = 0; i < n; i++)
		printf("%02x", p[i]);
	printf("\n");
}

static int vectors(void)
{
	unsigned char buf[32], out[32];
	unsigned char *million;
	ingot_sha256_ctx c;
	size_t i;
	printf("%08x\n", (unsigned)ingot_crc32c(0, "123456789", 9));
	memset(buf, 0, 32);
	printf("%08x\n", (unsigned)ingot_crc32c(0, buf, 32));
	memset(buf, 0xFF, 32);
	printf("%08x\n", (unsigned)ingot_crc32c(0, buf, 32));
	for (i = 0; i < 32; i++)
		buf[i] = (unsigned char)i;
	printf("%08x\n", (unsigned)ingot_crc32c(0, buf, 32));
	for (i = 0; i < 32; i++)
		buf[i] = (unsigned char)(31 - i);
	printf("%08x\n", (unsigned)ingot_crc32c(0, buf, 32));
	/* A CRC continued over two pieces equals the CRC of the whole. */
	printf("%08x\n", (unsigned)ingot_crc32c(ingot_crc32c(0, "1234", 4), "56789", 5));
	ingot_sha256("abc", 3, out);
	hex(out, 32);
	ingot_sha256("", 0, out);
	hex(out, 32);
	ingot_sha256("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq", 56, out);
	hex(out, 32);
	million = malloc(1000000);
	if (!million)
		return 2;
	memset(million, 'a', 1000000);
	ingot_sha256(million, 1000000, out);
	hex(out, 32);
	/* The same million bytes fed in uneven pieces. */
	ingot_sha256_init(&c);
	for (i = 0; i < 1000000;) {
		size_t n = (i * 7 + 13) % 131;
		if (n > 1000000 - i)
			n = 1000000 - i;
		ingot_sha256_update(&c, million + i, n);
		i += n;
	}
	ingot_sha256_final(&c, out);
	hex(out, 32);
	free(million);
	return 0;
}

static uint32_t word_id(const ingot_model *m, const char *w, size_t n)
{
	uint32_t id;
	if (!ingot_lookup(m, w, n, &id))
		id = ingot_unknown_id(m);
	return id;
}

static int query(int argc, char **argv)
{
	ingot_model m;
	ingot_error err;
	unsigned char *file = NULL, *in;
	size_t size, n, i;
	int buffered = argc > 2 && strcmp(argv[2], "--buffer") == 0;
	const char *path = argv[buffered ? 3 : 2];
	if (buffered) {
		file = read_file(path, &size);
		if (ingot_open_buffer(&m, file, size, &err) != INGOT_OK) {
			fprintf(stderr, "%s\n", err.message);
			return 2;
		}
	} else if (ingot_open_file(&m, path, &err) != INGOT_OK) {
		fprintf(stderr, "%s\n", err.message);
		return 2;
	}
	if (ingot_check(&m, &err) != INGOT_OK) {
		fprintf(stderr, "%s\n", err.message);
		return 1;
	}
	in = read_all(stdin, &n);
	for (i = 0; i < n;) {
		ingot_state s;
		size_t end = i, tab, a;
		while (end < n && in[end] != '\n')
			end++;
		for (tab = i; tab < end && in[tab] != '\t'; tab++)
			;
		ingot_empty_context(&m, &s);
		for (a = i; a < tab;) {
			size_t b = a;
			while (b < tab && in[b] != ' ')
				b++;
			if (b > a)
				ingot_next(&m, &s, word_id(&m, (const char *)in + a, b - a));
			a = b + 1;
		}
		if (tab < end)
			printf("%.17g\n", ingot_next(&m, &s, word_id(&m, (const char *)in + tab + 1, end - tab - 1)));
		i = end + 1;
	}
	free(in);
	ingot_close(&m);
	free(file);
	return 0;
}

/* Text as ids, sentences separated by INGOT_NONE. */
typedef struct {
	uint32_t *ids;
	size_t n;
} text_ids;

static text_ids map_text(const ingot_model *m, const unsigned char *in, size_t n)
{
	text_ids t;
	size_t i = 0;
	t.ids = malloc((n + 2) * sizeof *t.ids);
	t.n = 0;
	if (!t.ids)
		exit(2);
	while (i < n) {
		size_t b;
		if (in[i] == '\n') {
			if (t.n > 0 && t.ids[t.n - 1] != INGOT_NONE)
				t.ids[t.n++] = INGOT_NONE;
			i++;
			continue;
		}
		if (in[i] == ' ' || in[i] == '\t' || in[i] == '\r') {
			i++;
			continue;
		}
		for (b = i; b < n && in[b] != ' ' && in[b] != '\t' && in[b] != '\n' && in[b] != '\r'; b++)
			;
		t.ids[t.n] = word_id(m, (const char *)in + i, b - i);
		if (t.ids[t.n] == ingot_start_id(m))
			t.ids[t.n] = ingot_unknown_id(m);
		t.n++;
		i = b;
	}
	if (t.n > 0 && t.ids[t.n - 1] != INGOT_NONE)
		t.ids[t.n++] = INGOT_NONE;
	return t;
}

/* score_ids scores the text (the end of each sentence scored as </s>) and
 * returns the sum, NaN and -inf included. */
static double score_ids(const ingot_model *m, const text_ids *t)
{
	ingot_state s;
	double sum = 0;
	size_t i;
	ingot_begin_sentence(m, &s);
	for (i = 0; i < t->n; i++) {
		if (t->ids[i] == INGOT_NONE) {
			sum += ingot_next(m, &s, ingot_end_id(m));
			ingot_begin_sentence(m, &s);
		} else
			sum += ingot_next(m, &s, t->ids[i]);
	}
	return sum;
}

/* use reads everything a decoder reads from a model that opened: every
 * word looked up by its own bytes, the text scored. */
static double use(const ingot_model *m, const unsigned char *text, size_t n)
{
	uint32_t id, got, v = ingot_vocabulary_size(m);
	double sum;
	text_ids t;
	for (id = 0; id < v; id++) {
		size_t len;
		const char *w = ingot_word(m, id, &len);
		if (w)
			(void)ingot_lookup(m, w, len, &got);
	}
	(void)ingot_lookup(m, "", 0, &got);
	t = map_text(m, text, n);
	sum = score_ids(m, &t);
	/* Ids outside the vocabulary and a state from nowhere. */
	{
		ingot_state s;
		memset(&s, 0xAB, sizeof s);
		sum += ingot_next(m, &s, v);
		sum += ingot_next(m, &s, 0xFFFFFFFFu);
		memset(&s, 0xAB, sizeof s);
		s.length = INGOT_MAX_ORDER - 1;
		sum += ingot_next(m, &s, 0);
	}
	free(t.ids);
	return sum;
}

typedef struct {
	const char *kind;
	unsigned long tried, at_open, by_check;
} tally;

/* try opens size bytes at copy (a heap block of exactly that size, so that
 * the address sanitizer sees any read past it), checks and uses it. */
static void try_copy(tally *t, const unsigned char *copy, size_t size, const unsigned char *text, size_t n,
                     double *sink)
{
	ingot_model m;
	ingot_error err;
	t->tried++;
	if (ingot_open_buffer(&m, copy, size, &err) != INGOT_OK) {
		t->at_open++;
		return;
	}
	if (ingot_check(&m, &err) != INGOT_OK)
		t->by_check++;
	*sink += use(&m, text, n);
	ingot_close(&m);
}

static uint32_t rd32(const unsigned char *p)
{
	return (uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16 | (uint32_t)p[3] << 24;
}

static uint64_t rd64(const unsigned char *p) { return (uint64_t)rd32(p) | (uint64_t)rd32(p + 4) << 32; }

static void wr32(unsigned char *p, uint32_t v)
{
	p[0] = (unsigned char)v, p[1] = (unsigned char)(v >> 8), p[2] = (unsigned char)(v >> 16),
	p[3] = (unsigned char)(v >> 24);
}

/* reseal recomputes every section checksum, the content digest and the
 * header checksum of a file whose directory is intact, as an attacker
 * would. */
static void reseal(unsigned char *d, size_t size)
{
	uint32_t S = rd32(d + 12), j, crc;
	ingot_sha256_ctx c;
	if (64 + 32 * (uint64_t)S > size)
		return;
	ingot_sha256_init(&c);
	for (j = 0; j < S; j++) {
		unsigned char *e = d + 64 + 32 * (size_t)j;
		uint64_t off = rd64(e + 16), len = rd64(e + 24);
		if (off > size || len > size - off)
			continue;
		wr32(e + 12, ingot_crc32c(0, d + off, (size_t)len));
		if (rd32(e) != 9) {
			unsigned char rec[20];
			memcpy(rec, e, 12);
			memcpy(rec + 12, e + 24, 8);
			ingot_sha256_update(&c, rec, 20);
			ingot_sha256_update(&c, d + off, (size_t)len);
		}
	}
	ingot_sha256_final(&c, d + 24);
	crc = ingot_crc32c(0, d, 60);
	crc = ingot_crc32c(crc, d + 64, 32 * (size_t)S);
	wr32(d + 60, crc);
}

static uint64_t rng_state;

static uint32_t rnd(void)
{
	/* splitmix64 (Steele, Lea and Flood, 2014) */
	uint64_t z = (rng_state += 0x9E3779B97F4A7C15ull);
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
	z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
	return (uint32_t)((z ^ (z >> 31)) >> 32);
}

static int damage(int argc, char **argv)
{
	size_t size, n, i;
	unsigned char *orig, *text, *copy;
	tally flips = {"flip", 0, 0, 0}, cuts = {"truncation", 0, 0, 0}, over = {"overwrite", 0, 0, 0},
	      sealed = {"resealed", 0, 0, 0}, layout = {"layout", 0, 0, 0};
	double sink = 0;
	uint32_t S, j;
	if (argc < 4)
		return 2;
	orig = read_file(argv[2], &size);
	rng_state = strtoull(argv[3], NULL, 10);
	text = read_all(stdin, &n);
	S = rd32(orig + 12);

	/* One heap block of exactly the file's size, reused: a read past it
	 * is still one the address sanitizer reports. */
	copy = malloc(size);
	memcpy(copy, orig, size);
	for (i = 0; i < size * 8; i++) {
		copy[i / 8] ^= (unsigned char)(1u << (i % 8));
		try_copy(&flips, copy, size, text, n, &sink);
		copy[i / 8] ^= (unsigned char)(1u << (i % 8));
	}
	free(copy);
	for (i = 0; i < size; i++) {
		copy = malloc(i > 0 ? i : 1);
		memcpy(copy, orig, i);
		try_copy(&cuts, copy, i, text, n, &sink);
		free(copy);
	}
	/* Random values written over 32-bit words of the sections: as they
	 * are (the checks catch them), and resealed (only the bounds checks
	 * stand). Extreme values are drawn often. */
	for (i = 0; i < 4000; i++) {
		unsigned char *e;
		uint64_t off, len, at;
		uint32_t v, r;
		int k, words = 1 + (int)(rnd() % 4);
		copy = malloc(size);
		memcpy(copy, orig, size);
		for (k = 0; k < words; k++) {
			j = rnd() % S;
			e = copy + 64 + 32 * (size_t)j;
			off = rd64(e + 16), len = rd64(e + 24);
			if (len < 4)
				continue;
			at = off + 4 * (rnd() % (len / 4));
			r = rnd() % 6;
			v = r == 0 ? 0xFFFFFFFFu : r == 1 ? 0 : r == 2 ? 0x7F800000u : r == 3 ? rd32(copy + at) + 1 : rnd();
			wr32(copy + at, v);
		}
		try_copy(&over, copy, size, text, n, &sink);
		reseal(copy, size);
		try_copy(&sealed, copy, size, text, n, &sink);
		free(copy);
	}
	/* Random values written over fields of the header (version, section
	 * count, file length) and of the directory (kind, encoding, order,
	 * offset, length), everything resealed: the open checks alone must
	 * keep every read inside the file. */
	for (i = 0; i < 4000; i++) {
		static const unsigned header_fields[] = {8, 12, 16, 20};
		uint64_t at;
		uint32_t v, r;
		int k, fields = 1 + (int)(rnd() % 2);
		copy = malloc(size);
		memcpy(copy, orig, size);
		for (k = 0; k < fields; k++) {
			if (rnd() % 5 == 0)
				at = header_fields[rnd() % 4];
			else {
				static const unsigned entry_fields[] = {0, 4, 8, 16, 20, 24, 28};
				at = 64 + 32 * (uint64_t)(rnd() % S) + entry_fields[rnd() % 7];
			}
			r = rnd() % 7;
			v = r == 0 ? 0xFFFFFFFFu : r == 1 ? 0 : r == 2 ? rd32(copy + at) + 1 : r == 3 ? rd32(copy + at) - 1 :
			    r == 4 ? rd32(copy + at) + 8 : r == 5 ? (uint32_t)(rnd() % 16) : rnd();
			wr32(copy + at, v);
		}
		reseal(copy, size);
		try_copy(&layout, copy, size, text, n, &sink);
		free(copy);
	}
	{
		tally *all[5];
		int a;
		all[0] = &flips, all[1] = &cuts, all[2] = &over, all[3] = &sealed, all[4] = &layout;
		for (a = 0; a < 5; a++)
			printf("%s tried %lu refused_at_open %lu refused_by_check %lu\n", all[a]->kind, all[a]->tried,
			       all[a]->at_open, all[a]->by_check);
	}
	/* The sum is printed so that no call is optimised away. */
	fprintf(stderr, "sink %g\n", sink);
	free(orig);
	free(text);
	return 0;
}

static double now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec * 1e9 + (double)ts.tv_nsec;
}

static int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return x < y ? -1 : x > y;
}

static int bench(int argc, char **argv)
{
	ingot_model m;
	ingot_error err;
	unsigned char *in;
	size_t n, words = 0, i;
	int rounds, r;
	double *ns, sum = 0;
	text_ids t;
	if (argc < 4)
		return 2;
	rounds = atoi(argv[3]);
	if (rounds < 1)
		rounds = 1;
	if (ingot_open_file(&m, argv[2], &err) != INGOT_OK) {
		fprintf(stderr, "%s\n", err.message);
		return 2;
	}
	in = read_all(stdin, &n);
	t = map_text(&m, in, n);
	for (i = 0; i < t.n; i++)
		words++; /* every id and every sentence end is one prediction */
	ns = malloc((size_t)rounds * sizeof *ns);
	sum += score_ids(&m, &t); /* warm up */
	for (r = 0; r < rounds; r++) {
		double t0 = now();
		sum += score_ids(&m, &t);
		ns[r] = (now() - t0) / (double)words;
	}
	qsort(ns, (size_t)rounds, sizeof *ns, cmp_double);
	printf("words %lu ns_per_word %.1f sum %.6g\n", (unsigned long)words, ns[rounds / 2], sum);
	free(ns);
	free(t.ids);
	free(in);
	ingot_close(&m);
	return 0;
}

int main(int argc, char **argv)
{
	if (argc >= 2 && strcmp(argv[1], "vectors") == 0)
		return vectors();
	if (argc >= 3 && strcmp(argv[1], "query") == 0)
		return query(argc, argv);
	if (argc >= 3 && strcmp(argv[1], "damage") == 0)
		return damage(argc, argv);
	if (argc >= 3 && strcmp(argv[1], "bench") == 0)
		return bench(argc, argv);
	fprintf(stderr, "usage: driver vectors | query [--buffer] MODEL | damage MODEL SEED | bench MODEL ROUNDS\n");
	return 2;
}
