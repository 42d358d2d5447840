/* The repository stands alone and names no brands: every text file under src, configs, docs,
 * tests, models and .ci, and the top-level README, DEVELOPERS and CMake files, is scanned for
 * citations of notes that are not in the repository, and for the names of trademarks, makers
 * and products (issue 15 items 21 and 22). */
#include "tp_test.h"

/* ---- the tree ------------------------------------------------------------------------------ */

typedef void (*file_fn)(const char *path, const char *text, void *user);

#define SCAN_MAX_BYTES (4L << 20) /* larger files are data, not prose: skipped, bytes */

/* Call fn on every text file at or below `path` (NUL bytes or unreadable: skipped). */
static void walk(const char *path, file_fn fn, void *user)
{
    struct stat st;
    DIR *dp;
    struct dirent *e;
    if (lstat(path, &st) != 0 || S_ISLNK(st.st_mode))
        return;
    if (S_ISREG(st.st_mode)) {
        char *text;
        if (st.st_size > SCAN_MAX_BYTES || !(text = tp_read_file(path)))
            return;
        if ((off_t)strlen(text) == st.st_size)
            fn(path, text, user);
        free(text);
        return;
    }
    if (!S_ISDIR(st.st_mode) || !(dp = opendir(path)))
        return;
    while ((e = readdir(dp))) {
        char sub[TP_TEST_PATH];
        if (e->d_name[0] == '.' && (e->d_name[1] == '\0' || strcmp(e->d_name, "..") == 0))
            continue;
        if (snprintf(sub, sizeof sub, "%s/%s", path, e->d_name) < (int)sizeof sub)
            walk(sub, fn, user);
    }
    closedir(dp);
}

static void walk_repository(file_fn fn, void *user)
{
    static const char *const parts[] = {"src",       "configs",      "docs",
                                        "tests",     "models",       ".ci",
                                        "README.md", "DEVELOPERS.md", "CMakeLists.txt"};
    size_t i;
    for (i = 0; i < sizeof parts / sizeof parts[0]; i++) {
        char path[TP_TEST_PATH];
        snprintf(path, sizeof path, "%s/%s", TP_SOURCE_DIR, parts[i]);
        walk(path, fn, user);
    }
}

static int line_of(const char *text, const char *at)
{
    int line = 1;
    for (; text < at; text++)
        line += *text == '\n';
    return line;
}

typedef struct findings {
    int files, hits;
} findings;

/* ---- citations of notes outside the repository ------------------------------------------- */

/* The private design notes the project was written from: the repository must cite docs/ or the
 * published sources instead (the names are split so this file does not match itself). */
static const char *const outside_notes[] = {"DESIGN" ".md", "REFERENCES" ".md", "STYLE" ".md",
                                            "../" "shared", "shared" "/REFERENCES"};

static void find_notes(const char *path, const char *text, void *user)
{
    findings *f = user;
    size_t i;
    f->files++;
    for (i = 0; i < sizeof outside_notes / sizeof outside_notes[0]; i++) {
        const char *at = text;
        while ((at = strstr(at, outside_notes[i]))) {
            print_error("%s:%d: cites %s, which is not in the repository\n", path,
                        line_of(text, at), outside_notes[i]);
            f->hits++;
            at++;
        }
    }
}

static void test_sources_cite_nothing_outside_the_repository(void **state)
{
    findings f = {0, 0};
    (void)state;
    walk_repository(find_notes, &f);
    assert_true(f.files > 100); /* the walk found the tree */
    assert_int_equal(f.hits, 0);
}

/* ---- brand names --------------------------------------------------------------------------- */

/* FNV-1a, 64 bits (Fowler, Noll & Vo; offset basis 0xcbf29ce484222325, prime 0x100000001b3). */
static uint64_t fnv1a(const char *s, size_t n)
{
    uint64_t h = 0xcbf29ce484222325u;
    size_t i;
    for (i = 0; i < n; i++) {
        h ^= (unsigned char)s[i];
        h *= 0x100000001b3u;
    }
    return h;
}

static void test_sources_fnv1a_vectors(void **state)
{
    (void)state;
    /* Test vectors of the FNV reference code (from memory): "" is the offset basis,
     * "a" -> af63dc4c8601ec8c, "foobar" -> 85944171f73967e8. */
    assert_true(fnv1a("", 0) == 0xcbf29ce484222325u);
    assert_true(fnv1a("a", 1) == 0xaf63dc4c8601ec8cu);
    assert_true(fnv1a("foobar", 6) == 0x85944171f73967e8u);
}

/* FNV-1a hashes of lowercase words that may not appear in the repository: names of trademarks
 * (films, polymer grades, glasses, alloys, insulation), of makers of materials, sensors and
 * processors, and of the web sites and a code library the material table once cited. Stored as
 * hashes so that this file does not name them either. To add a word w, append the value of
 * fnv1a(w) (for instance printed by a one-line program calling the function above) and keep the
 * list sorted. */
static const uint64_t forbidden[] = {
    0x0506641c1070dfeeu, 0x070944a6c0925757u, 0x0abd58c7356937d4u, 0x1181357487acea89u,
    0x13f5ae7993672e02u, 0x18bb857877f36199u, 0x1aaa5a415d2b7856u, 0x1f85b2484dfd8ebeu,
    0x30d1bdb40ed97c53u, 0x380cff1d3b34030fu, 0x392a731137ce721cu, 0x3e7f1b603e3f9fe8u,
    0x3e865f6f98437880u, 0x403d91fde2b96894u, 0x42f8f360088b4ec7u, 0x43841250fcab4ae0u,
    0x489ca5c8acfaad10u, 0x49788e75576b1fe1u, 0x4dbd7967fa6fc3aau, 0x54a6d32056880463u,
    0x5f5cd9e7b342472bu, 0x61916e7ffbdad3c2u, 0x66730d9c83f698c9u, 0x6685de428100724au,
    0x6acf61babf0f6a55u, 0x6ae5c70591c9b2c9u, 0x6af2c439c8dffaebu, 0x6d834b9d5edcdaa8u,
    0x70b8475e3aafc366u, 0x70f1c904ea45358bu, 0x72f4a12eac3e4a28u, 0x76cf99a562d25146u,
    0x7d5cf2f4551f92b0u, 0x9016ca71e6d89078u, 0x924c4d0a6c7793a1u, 0x93bdb2d0ddca1573u,
    0x9b11197a5898d3c6u, 0x9d7fdbcfabbd1001u, 0xa31c323c5d205b7du, 0xa32bfe6067f95d98u,
    0xa523c5167f2db8b9u, 0xa7b2f403012f6879u, 0xacbf5e293bd07800u, 0xaef9a146554bdd05u,
    0xc1e9f2fae556cb51u, 0xc3c151e15e869e91u, 0xc5e99ac45a06a294u, 0xcc94b4ffa7aef02au,
    0xd275465bb4f12fa3u, 0xd432c6ad339ddf50u, 0xd5d7cb7908753ae0u, 0xe19518e9197bfa15u,
    0xe6793c2d22f6060fu, 0xe8da18dfd2fc01c2u, 0xed543b0daad3efe1u, 0xf483b9936f7dcd60u,
    0xf5c0b4feb8aeae69u, 0xf6cf03bf13431ac2u, 0xfc9123b76c4fc68cu,
};

typedef struct word_list {
    const uint64_t *hash; /* sorted */
    size_t n;
} word_list;

static int listed(const word_list *w, uint64_t h)
{
    size_t lo = 0, hi = w->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (w->hash[mid] == h)
            return 1;
        if (w->hash[mid] < h)
            lo = mid + 1;
        else
            hi = mid;
    }
    return 0;
}

#define WORD_MAX 64 /* longer runs of letters and digits are not names */

static int word_char(char c)
{
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9');
}

/* The whole words of `text` (runs of ASCII letters and digits, compared in lower case) whose
 * hash is in `w`; each is reported against `path` and counted. */
static int find_words(const char *path, const char *text, const word_list *w)
{
    const char *p = text;
    int hits = 0;
    while (*p) {
        const char *start;
        char word[WORD_MAX];
        size_t n = 0;
        while (*p && !word_char(*p))
            p++;
        start = p;
        while (word_char(*p)) {
            if (n < WORD_MAX)
                word[n] = (char)(*p >= 'A' && *p <= 'Z' ? *p - 'A' + 'a' : *p);
            n++;
            p++;
        }
        if (n > 0 && n <= WORD_MAX && listed(w, fnv1a(word, n))) {
            print_error("%s:%d: '%.*s' names a brand, maker or product\n", path,
                        line_of(text, start), (int)n, start);
            hits++;
        }
    }
    return hits;
}

static void find_brands(const char *path, const char *text, void *user)
{
    static const word_list brands = {forbidden, sizeof forbidden / sizeof forbidden[0]};
    findings *f = user;
    f->files++;
    f->hits += find_words(path, text, &brands);
}

static void test_sources_name_no_brands(void **state)
{
    findings f = {0, 0};
    size_t i;
    (void)state;
    for (i = 1; i < sizeof forbidden / sizeof forbidden[0]; i++)
        assert_true(forbidden[i - 1] < forbidden[i]); /* sorted for the search */
    walk_repository(find_brands, &f);
    assert_true(f.files > 100);
    assert_int_equal(f.hits, 0);
}

/* The scanner finds a listed word in any letter case and only as a whole word: with "glass"
 * listed, "Glass" and "GLASS" match, "glasses", "fibreglass" and "glass2" do not. */
static void test_sources_scanner_whole_words(void **state)
{
    uint64_t h[1];
    word_list w = {h, 1};
    (void)state;
    h[0] = fnv1a("glass", 5);
    assert_int_equal(find_words("inline", "Glass, GLASS (glass)", &w), 3);
    assert_int_equal(find_words("inline", "glasses fibreglass glass2 gla ss", &w), 0);
    assert_int_equal(find_words("inline", "", &w), 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sources_fnv1a_vectors),
        cmocka_unit_test(test_sources_scanner_whole_words),
        cmocka_unit_test(test_sources_cite_nothing_outside_the_repository),
        cmocka_unit_test(test_sources_name_no_brands),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
