/*
 * score.c: score text with an ingot model, using the reader in ingot.h.
 *
 *     score [--no-checksums] MODEL < TEXT
 *
 * TEXT is UTF-8, one sentence per line, tokens separated by white space
 * (empty lines are skipped). For each sentence t1 .. tm it prints one line:
 * the log10 probability of each prediction, t1 .. tm and then </s>, each
 * from the tokens before it starting from <s>, as %.9g separated by single
 * spaces. A token outside the vocabulary (or <s>, which is never predicted)
 * is scored, and used as context, as <unk>.
 *
 * Before scoring it checks every section's CRC-32C and the content digest;
 * --no-checksums skips that check (the reader's bounds checks stay).
 *
 * Exit status: 0 success; 1 the model is damaged (the message names the
 * section); 2 bad usage, an unreadable model or bad input text.
 */
#include "ingot.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const char usage[] = "usage: score [--no-checksums] MODEL < TEXT\n";

/* decode reads one UTF-8 sequence at p (n bytes left) into *r and returns
 * its length, or 0 when the bytes are not valid UTF-8 (overlong forms,
 * surrogates and values above U+10FFFF included). */
static size_t decode(const unsigned char *p, size_t n, unsigned long *r)
{
	unsigned long c;
	size_t len, i;
	if (p[0] < 0x80) {
		*r = p[0];
		return 1;
	}
	if (p[0] >= 0xC2 && p[0] <= 0xDF)
		len = 2, c = p[0] & 0x1F;
	else if (p[0] >= 0xE0 && p[0] <= 0xEF)
		len = 3, c = p[0] & 0x0F;
	else if (p[0] >= 0xF0 && p[0] <= 0xF4)
		len = 4, c = p[0] & 0x07;
	else
		return 0;
	if (n < len)
		return 0;
	for (i = 1; i < len; i++) {
		if ((p[i] & 0xC0) != 0x80)
			return 0;
		c = c << 6 | (p[i] & 0x3F);
	}
	if ((len == 3 && c < 0x800) || (len == 4 && (c < 0x10000 || c > 0x10FFFF)) || (c >= 0xD800 && c <= 0xDFFF))
		return 0;
	*r = c;
	return len;
}

/* is_space: the white space that separates tokens (Unicode's White_Space
 * property: the ASCII controls 9..13 and space, NEL, no-break space, and
 * the space separators). */
static int is_space(unsigned long c)
{
	return (c >= 0x09 && c <= 0x0D) || c == 0x20 || c == 0x85 || c == 0xA0 || c == 0x1680 ||
	       (c >= 0x2000 && c <= 0x200A) || c == 0x2028 || c == 0x2029 || c == 0x202F || c == 0x205F ||
	       c == 0x3000;
}

/* score_line scores one sentence; it returns 0, or -1 when the line is not
 * valid UTF-8. */
static int score_line(const ingot_model *m, const unsigned char *p, size_t n, FILE *out)
{
	ingot_state s;
	size_t i = 0, tokens = 0;
	uint32_t unk = ingot_unknown_id(m), start = ingot_start_id(m);
	/* Validate first: a bad line prints nothing. */
	while (i < n) {
		unsigned long c;
		size_t len = decode(p + i, n - i, &c);
		if (len == 0)
			return -1;
		i += len;
	}
	ingot_begin_sentence(m, &s);
	i = 0;
	while (i < n) {
		unsigned long c;
		size_t len = decode(p + i, n - i, &c), begin;
		uint32_t id;
		if (is_space(c)) {
			i += len;
			continue;
		}
		begin = i;
		while (i < n) {
			len = decode(p + i, n - i, &c);
			if (is_space(c))
				break;
			i += len;
		}
		if (!ingot_lookup(m, (const char *)p + begin, i - begin, &id) || id == start)
			id = unk;
		fprintf(out, tokens++ ? " %.9g" : "%.9g", ingot_next(m, &s, id));
	}
	if (tokens > 0)
		fprintf(out, " %.9g\n", ingot_next(m, &s, ingot_end_id(m)));
	return 0;
}

int main(int argc, char **argv)
{
	ingot_model m;
	ingot_error err;
	const char *path = NULL;
	int checksums = 1, i, status = 0;
	unsigned char *buf = NULL;
	size_t cap = 1 << 16, used = 0, begin = 0, line = 0;
	int eof = 0;

	for (i = 1; i < argc; i++) {
		if (strcmp(argv[i], "--no-checksums") == 0)
			checksums = 0;
		else if (strcmp(argv[i], "-h") == 0 || strcmp(argv[i], "--help") == 0) {
			fputs(usage, stdout);
			return 0;
		} else if (argv[i][0] == '-' && argv[i][1] != '\0') {
			fprintf(stderr, "score: unknown option %s\n%s", argv[i], usage);
			return 2;
		} else if (path == NULL)
			path = argv[i];
		else {
			fprintf(stderr, "score: one model only (also given %s)\n%s", argv[i], usage);
			return 2;
		}
	}
	if (path == NULL) {
		fputs(usage, stderr);
		return 2;
	}
	if (ingot_open_file(&m, path, &err) != INGOT_OK) {
		fprintf(stderr, "score: %s\n", err.message);
		return 2;
	}
	if (checksums && ingot_check(&m, &err) != INGOT_OK) {
		fprintf(stderr, "score: %s: damaged: %s\n", path, err.message);
		ingot_close(&m);
		return 1;
	}

	/* Read standard input in blocks; a line may be of any length. The
	 * unread bytes are buf[begin:used]. */
	buf = (unsigned char *)malloc(cap);
	if (buf == NULL) {
		fputs("score: out of memory\n", stderr);
		ingot_close(&m);
		return 2;
	}
	for (;;) {
		unsigned char *nl = begin < used ? (unsigned char *)memchr(buf + begin, '\n', used - begin) : NULL;
		size_t len, text;
		if (nl == NULL && !eof) {
			size_t got;
			memmove(buf, buf + begin, used - begin);
			used -= begin;
			begin = 0;
			if (used == cap) { /* a long line: grow */
				unsigned char *bigger = (unsigned char *)realloc(buf, cap * 2);
				if (bigger == NULL) {
					fputs("score: out of memory\n", stderr);
					status = 2;
					break;
				}
				buf = bigger;
				cap *= 2;
			}
			got = fread(buf + used, 1, cap - used, stdin);
			used += got;
			if (got == 0) {
				if (ferror(stdin)) {
					fputs("score: stdin: read error\n", stderr);
					status = 2;
					break;
				}
				eof = 1;
			}
			continue;
		}
		if (nl == NULL && begin == used)
			break; /* end of input */
		len = nl ? (size_t)(nl - (buf + begin)) : used - begin;
		text = len;
		if (nl && text > 0 && buf[begin + text - 1] == '\r')
			text--;
		line++;
		if (score_line(&m, buf + begin, text, stdout) != 0) {
			fprintf(stderr, "score: stdin:%lu: invalid UTF-8\n", (unsigned long)line);
			status = 2;
			break;
		}
		begin += len + (nl ? 1 : 0);
	}
	free(buf);
	if (fflush(stdout) != 0 && status == 0) {
		fputs("score: writing the scores failed\n", stderr);
		status = 2;
	}
	ingot_close(&m);
	return status;
}
