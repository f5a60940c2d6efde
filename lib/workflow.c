/* workflow.c — check a recorded product against the prediction; plan a route to a target.
 * Owns: record resolution (substrate, reagents, recorded products), verdicts, plan ranking.
 * Must not: hold chemistry of its own (every product comes from as_predict) or do I/O.
 *
 * Molecules are compared as canonical SMILES without atom maps (as_canon_smiles). Components
 * of a role are found by writing the role canonically and splitting at '.' outside brackets:
 * the writer puts every component in one piece, so the pieces keep their stereo marks. */
#include "addsite/workflow.h"
#include "addsite/canon.h"
#include "addsite/perceive.h"
#include "addsite/sites.h"
#include "addsite/smiles.h"
#include "io_int.h"
#include "status_int.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ORDER VERDICT */
static const char *const verdict_names[AS_VERDICT_COUNT] = {
    "agrees", "minor", "stereo", "regioisomer", "skeleton", "not_addition", "no_alkene",
};

const char *as_verdict_name(as_verdict v)
{
    return (unsigned)v < AS_VERDICT_COUNT ? verdict_names[v] : "?";
}

const char *as_reagent_source_name(as_reagent_source s)
{
    switch (s) {
    case AS_REAGENTS_TEXT: return "text";
    case AS_REAGENTS_AGENTS: return "agents";
    case AS_REAGENTS_DEFAULT: return "default";
    }
    return "?";
}

const char *as_plan_tier_name(as_plan_tier t)
{
    switch (t) {
    case AS_PLAN_MAJOR: return "major";
    case AS_PLAN_MINOR: return "minor";
    case AS_PLAN_NONE: return "none";
    }
    return "?";
}

void as_check_opts_init(as_check_opts *o)
{
    as_predict_opts_init(&o->predict);
    o->strict_stereo = 0;
    o->cache = NULL;
}

/* ---------------------------------------------------------------- reagent memo */

/* Direct-mapped by a hash of the text; a slot holds one recognised text (failures are not
 * kept: their messages are built afresh). 64 slots hold every reagent text of a typical
 * reaction file. */
#define CACHE_SLOTS 64

typedef struct cache_slot {
    char *text;             /* owned; NULL when empty */
    size_t len;
    const as_rules *rules;  /* the table the match points into */
    as_reagent_match match;
} cache_slot;

struct as_check_cache {
    cache_slot slot[CACHE_SLOTS];
};

as_check_cache *as_check_cache_new(void)
{
    return calloc(1, sizeof(as_check_cache));
}

void as_check_cache_free(as_check_cache *c)
{
    if (!c)
        return;
    for (int i = 0; i < CACHE_SLOTS; i++)
        free(c->slot[i].text);
    free(c);
}

static unsigned text_hash(const char *s, size_t n)
{
    uint32_t h = 2166136261u; /* FNV-1a */
    for (size_t i = 0; i < n; i++) {
        h ^= (unsigned char)s[i];
        h *= 16777619u;
    }
    return (unsigned)(h % CACHE_SLOTS);
}

/* as_rules_recognise through the memo when there is one. */
static as_status recognise(const as_rules *rules, as_check_cache *cache, const char *text,
                           as_reagent_match *m, as_error *err)
{
    size_t n = strlen(text);
    if (!cache)
        return as_rules_recognise(rules, text, n, m, err);
    cache_slot *e = &cache->slot[text_hash(text, n)];
    if (e->text && e->rules == rules && e->len == n && !memcmp(e->text, text, n)) {
        *m = e->match;
        as_error_clear(err);
        return AS_OK;
    }
    as_status st = as_rules_recognise(rules, text, n, m, err);
    if (st != AS_OK)
        return st;
    char *copy = malloc(n + 1);
    if (copy) { /* out of memory only costs the memo */
        memcpy(copy, text, n + 1);
        free(e->text);
        e->text = copy;
        e->len = n;
        e->rules = rules;
        e->match = *m;
    }
    return AS_OK;
}

/* ---------------------------------------------------------------- small helpers */

static char *xstrdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

static char *xprintf(const char *fmt, ...) AS_PRINTF(1, 2);
static char *xprintf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *s = as_fmt_alloc_v(fmt, ap);
    va_end(ap);
    return s;
}

static as_status nomem(as_error *err)
{
    return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
}

/* Canonical SMILES without atom maps; stereo as asked. */
static as_status canon(const as_mol *m, int stereo, char **out, as_error *err)
{
    as_canon_opts o;
    as_canon_opts_init(&o);
    o.atom_maps = 0;
    o.stereo = stereo;
    return as_canon_smiles(m, &o, out, err);
}

/* A list of owned strings. */
typedef struct strv {
    int n, cap;
    char **v;
} strv;

static int strv_push(strv *s, char *str)
{
    if (!str)
        return -1;
    if (s->n == s->cap) {
        int cap = s->cap ? 2 * s->cap : 4;
        char **v = realloc(s->v, (size_t)cap * sizeof *v);
        if (!v) {
            free(str);
            return -1;
        }
        s->v = v;
        s->cap = cap;
    }
    s->v[s->n++] = str;
    return 0;
}

static void strv_free(strv *s)
{
    for (int i = 0; i < s->n; i++)
        free(s->v[i]);
    free(s->v);
    memset(s, 0, sizeof *s);
}

static int note(as_check *c, const char *fmt, ...) AS_PRINTF(2, 3);
static int note(as_check *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char buf[512];
    as_fmt_v(buf, sizeof buf, fmt, ap);
    va_end(ap);
    char **v = realloc(c->notes, (size_t)(c->nnotes + 1) * sizeof *v);
    if (!v)
        return -1;
    c->notes = v;
    if (!(v[c->nnotes] = xstrdup(buf)))
        return -1;
    c->nnotes++;
    return 0;
}

/* Splits the canonical SMILES (stereo kept, maps dropped) of m into its components. */
static as_status split_components(const as_mol *m, strv *out, as_error *err)
{
    if (m->natoms == 0)
        return AS_OK;
    char *s = NULL;
    as_status st = canon(m, 1, &s, err);
    if (st != AS_OK)
        return st;
    int depth = 0;
    const char *start = s;
    for (const char *p = s;; p++) {
        if (*p == '[')
            depth++;
        else if (*p == ']')
            depth--;
        if (*p == '\0' || (*p == '.' && depth == 0)) {
            size_t n = (size_t)(p - start);
            char *piece = malloc(n + 1);
            if (piece) {
                memcpy(piece, start, n);
                piece[n] = '\0';
            }
            if (strv_push(out, piece)) {
                free(s);
                return nomem(err);
            }
            if (*p == '\0')
                break;
            start = p + 1;
        }
    }
    free(s);
    return AS_OK;
}

static as_status parse_piece(const char *s, as_mol **out, as_error *err)
{
    return as_smiles_parse(s, strlen(s), out, err);
}

static int count_carbons(const as_mol *m)
{
    int n = 0;
    for (int i = 0; i < m->natoms; i++)
        n += m->atoms[i].elem == 6;
    return n;
}

/* 1 when m has a non-aromatic C=C, 0 when not, -1 on failure. */
static int has_alkene(const as_mol *m, as_error *err)
{
    as_sites *s = NULL;
    if (as_sites_find(m, &s, err) != AS_OK)
        return -1;
    int n = s->n;
    as_sites_free(s);
    return n > 0;
}

/* Canonical SMILES of the carbon skeleton: carbon atoms only, every C–C bond single. */
static as_status skeleton(const as_mol *m, char **out, as_error *err)
{
    *out = NULL;
    as_mol *k = as_mol_new();
    int *idx = malloc((size_t)(m->natoms ? m->natoms : 1) * sizeof *idx);
    as_status st = AS_OK;
    if (!k || !idx) {
        st = nomem(err);
        goto done;
    }
    for (int i = 0; i < m->natoms; i++) {
        idx[i] = -1;
        if (m->atoms[i].elem == 6 && (idx[i] = as_mol_add_atom(k, 6)) < 0) {
            st = nomem(err);
            goto done;
        }
    }
    for (int b = 0; b < m->nbonds; b++) {
        int a1 = idx[m->bonds[b].a], a2 = idx[m->bonds[b].b];
        if (a1 >= 0 && a2 >= 0 && as_mol_add_bond(k, a1, a2, AS_BOND_SINGLE) < 0) {
            st = nomem(err);
            goto done;
        }
    }
    st = as_perceive(k, AS_PASS_ALL, NULL, err);
    if (st == AS_OK)
        st = canon(k, 0, out, err);
done:
    free(idx);
    as_mol_free(k);
    return st;
}

/* ---------------------------------------------------------------- stereo comparison */

/* A copy of m without atom maps and, when drop_stereo, without stereo records. */
static as_mol *plain_copy(const as_mol *m, int drop_stereo)
{
    as_mol *c = as_mol_copy(m);
    if (!c)
        return NULL;
    for (int i = 0; i < c->natoms; i++)
        c->atoms[i].mapnum = 0;
    if (drop_stereo) {
        c->ntetra = 0;
        c->ndbs = 0;
    }
    return c;
}

/* Symmetry classes of m's constitution (maps and stereo ignored), new array. */
static int *classes(const as_mol *m, as_error *err)
{
    as_mol *c = plain_copy(m, 1);
    int *cls = malloc((size_t)(m->natoms ? m->natoms : 1) * sizeof *cls);
    if (!c || !cls || as_canon_classes(c, cls, err) != AS_OK) {
        free(cls);
        cls = NULL;
    }
    as_mol_free(c);
    return cls;
}

/* Marked stereo elements of m as class keys: tetra centre → class + 1; double bond →
 * -(1 + lo * natoms + hi) over its end classes. */
typedef struct keyset {
    int n;
    long *k;
} keyset;

static long tetra_key(const int *cls, int atom)
{
    return (long)cls[atom] + 1;
}

static long db_key(const as_mol *m, const int *cls, int bond)
{
    long x = cls[m->bonds[bond].a], y = cls[m->bonds[bond].b];
    long lo = x < y ? x : y, hi = x < y ? y : x;
    return -(1 + lo * (long)m->natoms + hi);
}

static int keys_of(const as_mol *m, const int *cls, keyset *ks)
{
    ks->n = 0;
    ks->k = malloc((size_t)(m->ntetra + m->ndbs + 1) * sizeof *ks->k);
    if (!ks->k)
        return -1;
    for (int i = 0; i < m->ntetra; i++)
        ks->k[ks->n++] = tetra_key(cls, m->tetra[i].center);
    for (int i = 0; i < m->ndbs; i++)
        ks->k[ks->n++] = db_key(m, cls, m->dbs[i].bond);
    return 0;
}

static int keys_has(const keyset *ks, long k)
{
    for (int i = 0; i < ks->n; i++)
        if (ks->k[i] == k)
            return 1;
    return 0;
}

/* Keeps only m's stereo records whose key is in keep; returns how many were dropped. */
static int keep_keys(as_mol *m, const int *cls, const keyset *keep)
{
    int dropped = 0, n = 0;
    for (int i = 0; i < m->ntetra; i++) {
        if (keys_has(keep, tetra_key(cls, m->tetra[i].center)))
            m->tetra[n++] = m->tetra[i];
        else
            dropped++;
    }
    m->ntetra = n;
    n = 0;
    for (int i = 0; i < m->ndbs; i++) {
        if (keys_has(keep, db_key(m, cls, m->dbs[i].bond)))
            m->dbs[n++] = m->dbs[i];
        else
            dropped++;
    }
    m->ndbs = n;
    return dropped;
}

static void mirror(as_mol *m)
{
    for (int i = 0; i < m->ntetra; i++)
        m->tetra[i].parity = m->tetra[i].parity == AS_CCW ? AS_CW : AS_CCW;
}

typedef struct stereo_cmp {
    int same;       /* the marks both draw agree (possibly as the mirror image) */
    int exact;      /* identical canonical SMILES with stereo */
    int mirrored;   /* agreement needed the mirror image */
    int extra;      /* the recorded product marks elements the prediction leaves open */
    int missing;    /* the prediction fixes elements the recorded product does not draw */
} stereo_cmp;

/* Compares the stereo of rec (recorded) and pred (predicted), which have the same
 * constitution. mirror_ok: the prediction stands for a racemate. */
static as_status compare_stereo(const as_mol *rec, const as_mol *pred, int mirror_ok,
                                stereo_cmp *r, as_error *err)
{
    memset(r, 0, sizeof *r);
    as_status st = AS_OK;
    int *cr = classes(rec, err), *cp = classes(pred, err);
    as_mol *a = plain_copy(rec, 0), *b = plain_copy(pred, 0);
    keyset kr = {0, NULL}, kp = {0, NULL};
    char *sa = NULL, *sb = NULL, *sfull = NULL, *pfull = NULL;
    if (!cr || !cp || !a || !b || keys_of(rec, cr, &kr) || keys_of(pred, cp, &kp)) {
        st = nomem(err);
        goto done;
    }
    if ((st = canon(a, 1, &sfull, err)) != AS_OK || (st = canon(b, 1, &pfull, err)) != AS_OK)
        goto done;
    if (!strcmp(sfull, pfull)) {
        r->same = r->exact = 1;
        goto done;
    }
    r->extra = keep_keys(a, cr, &kp) > 0;
    r->missing = keep_keys(b, cp, &kr) > 0;
    if ((st = canon(a, 1, &sa, err)) != AS_OK || (st = canon(b, 1, &sb, err)) != AS_OK)
        goto done;
    if (!strcmp(sa, sb)) {
        r->same = 1;
    } else if (mirror_ok) {
        mirror(b);
        free(sb);
        sb = NULL;
        if ((st = canon(b, 1, &sb, err)) != AS_OK)
            goto done;
        if (!strcmp(sa, sb))
            r->same = r->mirrored = 1;
    }
    /* marks the canonical writer drops (not real stereo) do not count as extra or missing */
    if (r->same && !r->extra && !r->missing && !r->mirrored)
        r->exact = 1;
done:
    free(cr);
    free(cp);
    free(kr.k);
    free(kp.k);
    as_mol_free(a);
    as_mol_free(b);
    free(sa);
    free(sb);
    free(sfull);
    free(pfull);
    return st;
}

/* ---------------------------------------------------------------- judging */

static int substrate_has_centres(const as_mol *sub)
{
    return sub->ntetra > 0;
}

typedef struct judged {
    as_verdict verdict;
    char *reason;
    int matched;
    double share;
    strv notes;
} judged;

static void judged_free(judged *j)
{
    free(j->reason);
    strv_free(&j->notes);
}

static const char *stereo_words(as_stereo s)
{
    switch (s) {
    case AS_STEREO_RACEMIC: return "racemic";
    case AS_STEREO_MESO: return "meso";
    case AS_STEREO_SINGLE: return "a single stereoisomer";
    case AS_STEREO_DIASTEREOMERS: return "a mixture of diastereomers";
    default: return "no stereocentre";
    }
}

static const char *addmode_words(as_addmode m)
{
    switch (m) {
    case AS_ADD_SYN: return "syn addition";
    case AS_ADD_ANTI: return "anti addition";
    default: return "no stereo control";
    }
}

/* Notes for a stereo agreement that was not exact; returns the verdict it leaves. */
static int stereo_notes(const stereo_cmp *sc, const as_product *p, const as_check_opts *opts,
                        strv *notes)
{
    int bad = 0;
    if (sc->mirrored && !sc->extra && !sc->missing)
        strv_push(notes, xprintf("drawn as the mirror image of %s; the product is %s, so "
                                 "either enantiomer stands for it",
                                 p->smiles, stereo_words(p->stereo)));
    if (sc->extra) {
        strv_push(notes, xprintf("stereo marks drawn where the conditions set no configuration "
                                 "(the product is %s: %s); the marks are taken to show one "
                                 "member of it",
                                 stereo_words(p->stereo), p->smiles));
        bad |= opts->strict_stereo;
    }
    if (sc->missing) {
        strv_push(notes, xprintf("stereo not drawn; the conditions give %s (%s)", p->smiles,
                                 stereo_words(p->stereo)));
        bad |= opts->strict_stereo;
    }
    return bad;
}

/* Is product q the other orientation of a shown direct product at the same C=C? Compared
 * with the best-ranked unrearranged product of that site (the major unless it rearranged). */
static int is_regioisomer(const as_product *q, const as_outcome *shown)
{
    if (q->rearranged || !strcmp(q->regio, "n/a"))
        return 0;
    for (int i = 0; i < shown->nproducts; i++) {
        const as_product *r = &shown->products[i];
        if (r->site != q->site || r->rearranged || r->path != q->path ||
            !strcmp(r->regio, "n/a"))
            continue;
        return strcmp(q->regio, r->regio) != 0;
    }
    return 0;
}

/* Looks for rec among products of o. Returns 1 with j filled when found (agreement, minor or
 * stereo mismatch), 0 when no product has its constitution. */
static as_status match_outcome(const as_outcome *o, const as_mol *rec, const char *rec_plain,
                               int mirror_ok, const as_check_opts *opts, int trace,
                               const as_outcome *shown, judged *j, int *found, as_error *err)
{
    *found = 0;
    int stereo_mismatch = -1;
    const as_product *major = shown->nproducts ? &shown->products[0] : NULL;
    for (int i = 0; i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        char *plain = NULL;
        as_status st = canon(p->mol, 0, &plain, err);
        if (st != AS_OK)
            return st;
        int same = !strcmp(plain, rec_plain);
        free(plain);
        if (!same)
            continue;
        if (trace) {
            /* found only among the trace candidates: skip those the shown list already has */
            int listed = 0;
            for (int k = 0; k < shown->nproducts; k++)
                listed |= !strcmp(shown->products[k].smiles, p->smiles);
            if (listed)
                continue;
        }
        stereo_cmp sc;
        if ((st = compare_stereo(rec, p->mol, mirror_ok, &sc, err)) != AS_OK)
            return st;
        if (!sc.same) {
            if (stereo_mismatch < 0)
                stereo_mismatch = i;
            continue;
        }
        *found = 1;
        j->matched = trace ? -1 : i;
        j->share = p->share;
        int strict_bad = stereo_notes(&sc, p, opts, &j->notes);
        if (strict_bad) {
            j->verdict = AS_VERDICT_STEREO;
            j->reason = xprintf("right constitution, but with strict stereo the drawing must "
                                "show exactly the configuration the conditions fix: %s (%s)",
                                p->smiles, stereo_words(p->stereo));
        } else if (trace) {
            if (major && is_regioisomer(p, shown)) {
                j->verdict = AS_VERDICT_REGIOISOMER;
                j->reason = xprintf("the %s regioisomer of the major product %s; expected "
                                    "at most in traces (%.1f%%)",
                                    p->regio, major->smiles, p->share);
            } else if (major && p->rearranged != major->rearranged && p->rearranged) {
                j->verdict = AS_VERDICT_SKELETON;
                j->reason = xprintf("%s; expected at most in traces (%.1f%%), the major "
                                    "product is %s",
                                    p->rearranged ? "a rearranged skeleton (1,2-shift)"
                                                  : "the unrearranged skeleton",
                                    p->share, major->smiles);
            } else {
                j->verdict = AS_VERDICT_MINOR;
                j->reason = xprintf("a by-product expected at most in traces (%.1f%%); the "
                                    "major product is %s",
                                    p->share, major ? major->smiles : "none");
            }
        } else if (p->role == AS_PRODUCT_MAJOR) {
            j->verdict = AS_VERDICT_AGREES;
            j->reason = xprintf("the predicted major product (%.1f%%, %s%s)", p->share,
                                p->regio, p->rearranged ? ", rearranged skeleton" : "");
        } else if (p->role == AS_PRODUCT_MIXTURE) {
            j->verdict = AS_VERDICT_AGREES;
            j->reason = xprintf("one of a predicted mixture with no confident major "
                                "(%.1f%%, %s)",
                                p->share, p->regio);
        } else {
            j->verdict = AS_VERDICT_MINOR;
            if (major && is_regioisomer(p, shown))
                j->reason = xprintf("the %s regioisomer, a predicted minor product (%.1f%%); "
                                    "the major product is %s",
                                    p->regio, p->share, major->smiles);
            else if (major && p->rearranged != major->rearranged)
                j->reason = xprintf("a predicted minor product (%.1f%%) with the %s skeleton; "
                                    "the major product is %s",
                                    p->share, p->rearranged ? "rearranged" : "unrearranged",
                                    major->smiles);
            else
                j->reason = xprintf("a predicted minor product (%.1f%%); the major product "
                                    "is %s",
                                    p->share, major ? major->smiles : "none");
        }
        return j->reason ? AS_OK : nomem(err);
    }
    if (stereo_mismatch >= 0) {
        const as_product *p = &o->products[stereo_mismatch];
        *found = 1;
        j->matched = trace ? -1 : stereo_mismatch;
        j->share = p->share;
        j->verdict = AS_VERDICT_STEREO;
        j->reason = xprintf("right constitution, wrong relative stereo: the conditions give %s "
                            "(%s, %s)",
                            p->smiles, stereo_words(p->stereo), addmode_words(o->rule->stereo));
        return j->reason ? AS_OK : nomem(err);
    }
    return AS_OK;
}

/* Judges one recorded component. */
static as_status judge_one(const as_rules *rules, const as_mol *sub, const as_mol *rec,
                           const as_check_opts *opts, const as_check *c, judged *j,
                           as_error *err)
{
    memset(j, 0, sizeof *j);
    j->matched = -1;
    j->share = NAN;
    const as_outcome *o = c->outcome;
    char *rec_plain = NULL, *sub_plain = NULL, *sk_rec = NULL, *sk_sub = NULL, *sk_maj = NULL;
    as_outcome *full = NULL;
    int found = 0, mirror_ok = !substrate_has_centres(sub);
    as_status st = canon(rec, 0, &rec_plain, err);
    if (st != AS_OK)
        goto done;
    st = match_outcome(o, rec, rec_plain, mirror_ok, opts, 0, o, j, &found, err);
    if (st != AS_OK || found)
        goto done;
    /* the full candidate list: traces below the reporting threshold */
    as_predict_opts po = opts->predict;
    po.min_share = 0.0;
    po.max_products = 0;
    st = as_predict(rules, sub, &c->match, &po, &full, err);
    if (st != AS_OK)
        goto done;
    st = match_outcome(full, rec, rec_plain, mirror_ok, opts, 1, o, j, &found, err);
    if (st != AS_OK || found)
        goto done;

    const as_product *major = o->nproducts ? &o->products[0] : NULL;
    char frec[64] = "", fmaj[64] = "", fsub[64] = "";
    as_mol_formula(rec, frec, sizeof frec);
    as_mol_formula(sub, fsub, sizeof fsub);
    if (major)
        as_mol_formula(major->mol, fmaj, sizeof fmaj);
    if ((st = canon(sub, 0, &sub_plain, err)) != AS_OK)
        goto done;
    j->verdict = AS_VERDICT_NOT_ADDITION;
    if (!strcmp(rec_plain, sub_plain)) {
        j->reason = xprintf("the substrate itself, unchanged; the predicted major product is %s",
                            major ? major->smiles : "none");
        goto done;
    }
    if (!major || strcmp(frec, fmaj) != 0 || o->rule->regio == AS_REGIO_CLEAVE) {
        j->reason = xprintf("formula %s, but %s gives %s (%s) from %s", frec, o->variant->name,
                            major ? major->smiles : "no product", fmaj, fsub);
        goto done;
    }
    if ((st = skeleton(rec, &sk_rec, err)) != AS_OK || (st = skeleton(sub, &sk_sub, err)) ||
        (st = skeleton(major->mol, &sk_maj, err)))
        goto done;
    int any_shift = 0, shift_skel = 0;
    for (int i = 0; i < full->nproducts; i++) {
        if (!full->products[i].rearranged)
            continue;
        any_shift = 1;
        char *sk = NULL;
        if ((st = skeleton(full->products[i].mol, &sk, err)) != AS_OK)
            goto done;
        shift_skel |= !strcmp(sk, sk_rec);
        free(sk);
    }
    if (strcmp(sk_rec, sk_sub) != 0 && !shift_skel) {
        j->verdict = AS_VERDICT_SKELETON;
        if (!o->rule->shifts)
            j->reason = xprintf("needs a change of the carbon skeleton, but %s goes through a %s "
                                "and does not rearrange; the predicted major product is %s",
                                o->rule->id, o->rule->intermediate, major->smiles);
        else
            j->reason = xprintf("a carbon skeleton that no 1,2-shift of the %s gives%s; "
                                "the predicted major product is %s",
                                o->rule->intermediate,
                                any_shift ? "" : " (no more stable cation is within one shift)",
                                major->smiles);
    } else if (!strcmp(sk_rec, sk_sub) && major->rearranged) {
        j->verdict = AS_VERDICT_SKELETON;
        j->reason = xprintf("keeps the substrate's skeleton, but the %s rearranges: the "
                            "predicted major product is %s",
                            o->rule->intermediate, major->smiles);
    } else {
        j->reason = xprintf("same formula as the adduct (%s), but the added atoms are not on "
                            "the carbons these conditions use; the predicted major product is "
                            "%s",
                            fmaj, major->smiles);
    }
done:
    if (st == AS_OK && !j->reason)
        st = nomem(err);
    as_outcome_free(full);
    free(rec_plain);
    free(sub_plain);
    free(sk_rec);
    free(sk_sub);
    free(sk_maj);
    return st;
}

static int in_list(const strv *s, const char *x)
{
    for (int i = 0; i < s->n; i++)
        if (!strcmp(s->v[i], x))
            return 1;
    return 0;
}

/* Judges the recorded product pieces; like = canonical pieces of reactants and agents. */
static as_status judge_pieces(const as_rules *rules, const as_mol *sub, const strv *pieces,
                              const strv *like, const as_check_opts *opts, as_check *c,
                              as_error *err)
{
    int sub_c = count_carbons(sub), cleave = c->outcome->rule->regio == AS_REGIO_CLEAVE;
    judged best;
    memset(&best, 0, sizeof best);
    int have = 0, considered = 0;
    const char *best_piece = NULL;
    as_status st = AS_OK;
    for (int i = 0; i < pieces->n; i++) {
        const char *s = pieces->v[i];
        as_mol *m = NULL;
        if ((st = parse_piece(s, &m, err)) != AS_OK)
            break;
        int nc = count_carbons(m);
        if (nc == 0) {
            note(c, "ignored %s in the products: no carbon (a counter-ion or inorganic "
                    "by-product)", s);
        } else if (in_list(like, s)) {
            note(c, "ignored %s in the products: it is also among the reactants or agents", s);
        } else if (!cleave && nc < sub_c) {
            note(c, "ignored %s in the products: fewer carbons than the substrate (a "
                    "co-product, solvent or spectator)", s);
        } else {
            judged j;
            considered++;
            st = judge_one(rules, sub, m, opts, c, &j, err);
            if (st == AS_OK) {
                if (!have || j.verdict < best.verdict) {
                    if (have)
                        judged_free(&best);
                    best = j;
                    best_piece = s;
                    have = 1;
                } else {
                    judged_free(&j);
                }
            }
        }
        as_mol_free(m);
        if (st != AS_OK)
            break;
    }
    if (st != AS_OK) {
        if (have)
            judged_free(&best);
        return st;
    }
    c->has_product = 1;
    const as_product *major = c->outcome->nproducts ? &c->outcome->products[0] : NULL;
    if (!have) {
        c->verdict = AS_VERDICT_NOT_ADDITION;
        c->reason = xprintf("no recorded product can be an adduct of the substrate (every "
                            "component was set aside); the predicted major product is %s",
                            major ? major->smiles : "none");
        c->proposed = xstrdup("");
        c->matched = -1;
        c->matched_share = NAN;
        return c->reason && c->proposed ? AS_OK : nomem(err);
    }
    if (considered > 1)
        note(c, "%d recorded products were judged; the one that agrees best counts", considered);
    for (int i = 0; i < best.notes.n; i++)
        note(c, "%s", best.notes.v[i]);
    c->verdict = best.verdict;
    c->reason = best.reason;
    best.reason = NULL;
    c->matched = best.matched;
    c->matched_share = best.share;
    c->proposed = xstrdup(best_piece);
    judged_free(&best);
    return c->proposed ? AS_OK : nomem(err);
}

as_status as_check_judge(const as_rules *rules, const as_mol *substrate, const as_mol *product,
                         const as_mol *reactant_like, const as_check_opts *opts, as_check *c,
                         as_error *err)
{
    as_check_opts def;
    if (!opts) {
        as_check_opts_init(&def);
        opts = &def;
    }
    if (!substrate || !product || !c || !c->outcome)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_check_judge: missing argument");
    strv pieces = {0, 0, NULL}, like = {0, 0, NULL};
    as_status st = split_components(product, &pieces, err);
    if (st == AS_OK && reactant_like)
        st = split_components(reactant_like, &like, err);
    if (st == AS_OK)
        st = judge_pieces(rules, substrate, &pieces, &like, opts, c, err);
    strv_free(&pieces);
    strv_free(&like);
    return st;
}

void as_check_free(as_check *c)
{
    if (!c)
        return;
    free(c->substrate);
    as_outcome_free(c->outcome);
    free(c->reason);
    free(c->proposed);
    for (int i = 0; i < c->nnotes; i++)
        free(c->notes[i]);
    free(c->notes);
    free(c);
}

/* ---------------------------------------------------------------- record resolution */

static int blank(const char *s)
{
    if (!s)
        return 1;
    for (; *s; s++)
        if (*s != ' ' && *s != '\t' && *s != '\r' && *s != '\n')
            return 0;
    return 1;
}

/* Joins pieces with '.' (new string). */
static char *join(const strv *a, const strv *b)
{
    size_t n = 1;
    for (int i = 0; i < a->n; i++)
        n += strlen(a->v[i]) + 1;
    for (int i = 0; b && i < b->n; i++)
        n += strlen(b->v[i]) + 1;
    char *s = malloc(n);
    if (!s)
        return NULL;
    s[0] = '\0';
    for (int i = 0; i < a->n; i++) {
        if (s[0])
            strcat(s, ".");
        strcat(s, a->v[i]);
    }
    for (int i = 0; b && i < b->n; i++) {
        if (s[0])
            strcat(s, ".");
        strcat(s, b->v[i]);
    }
    return s;
}

/* Recognises agent pieces (joined); 0 when recognised. */
static int try_agents(const as_rules *rules, const strv *a, const strv *b, as_reagent_match *m,
                      as_error *err)
{
    char *s = join(a, b);
    if (!s || !s[0]) {
        free(s);
        return -1;
    }
    as_mol *mol = NULL;
    int rc = -1;
    if (as_smiles_parse(s, strlen(s), &mol, err) == AS_OK &&
        as_rules_recognise_agents(rules, mol, m, err) == AS_OK)
        rc = 0;
    as_mol_free(mol);
    free(s);
    return rc;
}

static void rule_list(const as_rules *rules, char *buf, size_t cap)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int i = 0; i < as_rules_count(rules) && used + 2 < cap; i++) {
        int n = snprintf(buf + used, cap - used, "%s%s", i ? ", " : "",
                         as_rules_get(rules, i)->id);
        if (n < 0)
            break;
        used += (size_t)n;
    }
}

as_status as_check_record(const as_rules *rules, const as_check_input *in,
                          const as_check_opts *opts, as_check **out, const char **field,
                          as_error *err)
{
    as_check_opts def;
    if (!opts) {
        as_check_opts_init(&def);
        opts = &def;
    }
    const char *fdummy;
    if (!field)
        field = &fdummy;
    *field = NULL;
    *out = NULL;
    if (!rules || !in)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_check_record: missing argument");
    as_check *c = calloc(1, sizeof *c);
    if (!c)
        return nomem(err);
    c->matched = -1;
    c->matched_share = NAN;
    as_reaction *rx = NULL;
    as_mol *in_sub = NULL, *in_prod = NULL, *sub = NULL, *prod = NULL;
    strv rpieces = {0, 0, NULL}, apieces = {0, 0, NULL}, reag = {0, 0, NULL};
    as_status st = AS_OK;
    int sub_i = -1;

    if (!blank(in->reaction)) {
        *field = "reaction";
        if ((st = as_reaction_parse(in->reaction, strlen(in->reaction), &rx, err)) != AS_OK)
            goto fail;
        if (rx->role[0]->natoms == 0) {
            st = as_error_set(err, AS_ERR_EMPTY, -1, -1,
                              "the reaction has no reactants: nothing to add to");
            goto fail;
        }
        if ((st = split_components(rx->role[0], &rpieces, err)) != AS_OK ||
            (st = split_components(rx->role[1], &apieces, err)) != AS_OK)
            goto fail;
        prod = rx->role[2];
    } else if (!blank(in->substrate)) {
        *field = "substrate";
        if ((st = as_smiles_parse(in->substrate, strlen(in->substrate), &in_sub, err)) != AS_OK)
            goto fail;
        if ((st = split_components(in_sub, &rpieces, err)) != AS_OK)
            goto fail;
        if (!blank(in->product)) {
            *field = "product";
            if ((st = as_smiles_parse(in->product, strlen(in->product), &in_prod, err)) !=
                AS_OK)
                goto fail;
            prod = in_prod;
        }
    } else {
        st = as_error_set(err, AS_ERR_EMPTY, -1, -1,
                          "no reaction or substrate SMILES in the record");
        goto fail;
    }

    /* the substrate: the reactant component with a C=C; the rest are reagents */
    {
        int nalk = 0, most_c = -1;
        for (int i = 0; i < rpieces.n; i++) {
            as_mol *m = NULL;
            if ((st = parse_piece(rpieces.v[i], &m, err)) != AS_OK)
                goto fail;
            int a = has_alkene(m, err), nc = count_carbons(m);
            /* the piece that is the substrate so far is kept: it is not parsed twice */
            if (a > 0 && nalk == 0) {
                as_mol_free(sub);
                sub = m;
                m = NULL;
            } else if (a == 0 && nalk == 0 && nc > most_c) {
                as_mol_free(sub);
                sub = m;
                m = NULL;
            }
            as_mol_free(m);
            if (a < 0) {
                st = err ? err->code : AS_ERR_NOMEM;
                goto fail;
            }
            if (a && nalk++ == 0)
                sub_i = i;
            if (a && nalk == 2) {
                st = as_error_set(err, AS_ERR_REACTION, -1, -1,
                                  "more than one alkene among the reactants (%s and %s): "
                                  "give one substrate per record",
                                  rpieces.v[sub_i], rpieces.v[i]);
                goto fail;
            }
            if (!nalk && nc > most_c) {
                most_c = nc;
                sub_i = i;
            }
        }
        for (int i = 0; i < rpieces.n; i++)
            if (i != sub_i && strv_push(&reag, xstrdup(rpieces.v[i]))) {
                st = nomem(err);
                goto fail;
            }
        if (!(c->substrate = xstrdup(rpieces.v[sub_i]))) {
            st = nomem(err);
            goto fail;
        }
    }

    /* reagents: text, else agents, else the default */
    {
        as_reagent_match m;
        memset(&m, 0, sizeof m);
        m.temp_c = NAN;
        int have_agents = apieces.n + reag.n > 0;
        if (!blank(in->reagents)) {
            *field = "reagents";
            if ((st = recognise(rules, opts->cache, in->reagents, &m, err)) != AS_OK)
                goto fail;
            c->reagent_source = AS_REAGENTS_TEXT;
            if (have_agents) {
                as_reagent_match am;
                as_error aerr;
                char *agents = join(&apieces, &reag);
                if (!agents) {
                    st = nomem(err);
                    goto fail;
                }
                if (try_agents(rules, &apieces, &reag, &am, &aerr) == 0) {
                    if (am.rule != m.rule || am.variant != m.variant)
                        note(c, "agents %s read as %s (%s); the reagent text (%s) is used",
                             agents, am.variant->name, am.rule->id, m.variant->name);
                } else {
                    note(c, "agents %s not recognised; the reagent text is used", agents);
                }
                free(agents);
            }
        } else if (have_agents &&
                   (try_agents(rules, &apieces, &reag, &m, err) == 0 ||
                    (apieces.n && reag.n && try_agents(rules, &apieces, NULL, &m, err) == 0) ||
                    (apieces.n && reag.n && try_agents(rules, &reag, NULL, &m, err) == 0))) {
            c->reagent_source = AS_REAGENTS_AGENTS;
        } else if (!blank(in->default_reagents)) {
            if (have_agents) {
                char *agents = join(&apieces, &reag);
                note(c, "agents %s not recognised; the default reagents are used",
                     agents ? agents : "");
                free(agents);
            }
            *field = "default_reagents";
            if ((st = recognise(rules, opts->cache, in->default_reagents, &m, err)) != AS_OK)
                goto fail;
            c->reagent_source = AS_REAGENTS_DEFAULT;
        } else if (have_agents) {
            char *agents = join(&apieces, &reag), ids[512];
            rule_list(rules, ids, sizeof ids);
            *field = "reaction";
            st = as_error_set(err, AS_ERR_REAGENT, -1, -1,
                              "agents %s not recognised as a reagent set; rules: %s",
                              agents ? agents : "", ids);
            free(agents);
            goto fail;
        } else {
            char ids[512];
            rule_list(rules, ids, sizeof ids);
            *field = NULL;
            st = as_error_set(err, AS_ERR_REAGENT, -1, -1,
                              "no reagents given; rules: %s",
                              ids);
            goto fail;
        }
        c->match = m;
        if (c->reagent_source != AS_REAGENTS_AGENTS)
            for (int i = 0; i < reag.n; i++)
                note(c, "reactant %s taken as a reagent, not as the substrate", reag.v[i]);
        if (c->reagent_source == AS_REAGENTS_AGENTS && reag.n)
            for (int i = 0; i < reag.n; i++)
                note(c, "reactant %s read as an agent", reag.v[i]);
    }

    *field = NULL;
    /* the substrate piece is already canonical (split_components wrote it without maps, so
     * it has none): as_predict need not write it again */
    as_check_opts known = *opts;
    known.predict.substrate_smiles = c->substrate;
    opts = &known;
    st = as_predict(rules, sub, &c->match, &opts->predict, &c->outcome, err);
    if (st == AS_ERR_NO_SITE) {
        as_error_clear(err);
        c->no_site = 1;
        st = AS_OK;
        if (prod && prod->natoms) {
            c->has_product = 1;
            c->verdict = AS_VERDICT_NO_ALKENE;
            c->reason = xprintf("the substrate %s has no C=C outside aromatic rings: nothing "
                                "for %s to add to",
                                c->substrate, c->match.variant->name);
            char *p = NULL;
            if ((st = canon(prod, 1, &p, err)) != AS_OK)
                goto fail;
            c->proposed = p;
            if (!c->reason) {
                st = nomem(err);
                goto fail;
            }
        }
    } else if (st != AS_OK) {
        goto fail;
    } else if (prod && prod->natoms) {
        strv pieces = {0, 0, NULL}, like = {0, 0, NULL};
        st = split_components(prod, &pieces, err);
        for (int i = 0; st == AS_OK && i < rpieces.n; i++)
            if (strv_push(&like, xstrdup(rpieces.v[i])))
                st = nomem(err);
        for (int i = 0; st == AS_OK && i < apieces.n; i++)
            if (strv_push(&like, xstrdup(apieces.v[i])))
                st = nomem(err);
        if (st == AS_OK)
            st = judge_pieces(rules, sub, &pieces, &like, opts, c, err);
        strv_free(&pieces);
        strv_free(&like);
        if (st != AS_OK)
            goto fail;
    }
    as_reaction_free(rx);
    as_mol_free(in_sub);
    as_mol_free(in_prod);
    as_mol_free(sub);
    strv_free(&rpieces);
    strv_free(&apieces);
    strv_free(&reag);
    *out = c;
    return AS_OK;
fail:
    as_reaction_free(rx);
    as_mol_free(in_sub);
    as_mol_free(in_prod);
    as_mol_free(sub);
    strv_free(&rpieces);
    strv_free(&apieces);
    strv_free(&reag);
    as_check_free(c);
    return st;
}

/* ---------------------------------------------------------------- JSON */

as_status as_check_json(const as_check *c, int pretty, char **out, as_error *err)
{
    *out = NULL;
    cJSON *o = cJSON_CreateObject();
    if (!o)
        return nomem(err);
    int ok = 1;
    const as_product *major =
        c->outcome && c->outcome->nproducts ? &c->outcome->products[0] : NULL;
    if (c->has_product) {
        ok &= cJSON_AddStringToObject(o, "verdict", as_verdict_name(c->verdict)) != NULL;
        ok &= cJSON_AddBoolToObject(o, "agrees", c->verdict == AS_VERDICT_AGREES) != NULL;
        ok &= cJSON_AddStringToObject(o, "reason", c->reason) != NULL;
        ok &= cJSON_AddStringToObject(o, "proposed", c->proposed) != NULL;
    } else {
        ok &= cJSON_AddNullToObject(o, "verdict") != NULL;
    }
    if (major)
        ok &= cJSON_AddStringToObject(o, "predicted_major", major->smiles) != NULL;
    else
        ok &= cJSON_AddNullToObject(o, "predicted_major") != NULL;
    if (c->has_product && c->matched >= 0)
        ok &= cJSON_AddNumberToObject(o, "matched_product", c->matched + 1) != NULL;
    else
        ok &= cJSON_AddNullToObject(o, "matched_product") != NULL;
    ok &= cJSON_AddStringToObject(o, "substrate", c->substrate ? c->substrate : "") != NULL;
    ok &= cJSON_AddStringToObject(o, "reaction", c->match.rule ? c->match.rule->id : "") != NULL;
    ok &= cJSON_AddStringToObject(o, "reagents", c->match.variant ? c->match.variant->name
                                                                    : "") != NULL;
    ok &= cJSON_AddStringToObject(o, "reagent_source",
                                  as_reagent_source_name(c->reagent_source)) != NULL;
    cJSON *notes = cJSON_AddArrayToObject(o, "notes");
    ok &= notes != NULL;
    for (int i = 0; ok && i < c->nnotes; i++)
        ok &= cJSON_AddItemToArray(notes, cJSON_CreateString(c->notes[i]));
    if (c->outcome) {
        char *pj = NULL;
        as_status st = as_outcome_json(c->outcome, 0, &pj, err);
        if (st != AS_OK) {
            cJSON_Delete(o);
            return st;
        }
        cJSON *p = cJSON_Parse(pj);
        free(pj);
        ok &= p != NULL && cJSON_AddItemToObject(o, "prediction", p);
    } else {
        ok &= cJSON_AddNullToObject(o, "prediction") != NULL;
    }
    if (ok)
        *out = pretty ? cJSON_Print(o) : cJSON_PrintUnformatted(o);
    cJSON_Delete(o);
    return ok && *out ? AS_OK : nomem(err);
}

/* ---------------------------------------------------------------- plan */

void as_plan_free(as_plan *p)
{
    if (!p)
        return;
    for (int i = 0; i < p->n; i++) {
        as_outcome_free(p->v[i].outcome);
        free(p->v[i].note);
    }
    free(p->v);
    free(p->substrate);
    free(p->target);
    free(p);
}

static int tier_cmp(const void *x, const void *y)
{
    const as_plan_entry *a = x, *b = y;
    if (a->tier != b->tier)
        return a->tier < b->tier ? -1 : 1;
    if (a->tier != AS_PLAN_NONE && a->share != b->share)
        return a->share > b->share ? -1 : 1;
    if (a->tier != AS_PLAN_NONE && a->product >= 0 && b->product >= 0) {
        int pa = a->outcome->products[a->product].share_published;
        int pb = b->outcome->products[b->product].share_published;
        if (pa != pb)
            return pa ? -1 : 1;
    }
    return 0;
}

as_status as_plan_run(const as_rules *rules, const as_mol *substrate, const as_mol *target,
                      const as_check_opts *opts, as_plan **out, as_error *err)
{
    as_check_opts def;
    if (!opts) {
        as_check_opts_init(&def);
        opts = &def;
    }
    *out = NULL;
    if (!rules || !substrate || !target)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_plan_run: missing argument");
    as_plan *p = calloc(1, sizeof *p);
    if (!p)
        return nomem(err);
    as_status st = canon(substrate, 1, &p->substrate, err);
    if (st == AS_OK)
        st = canon(target, 1, &p->target, err);
    int total = 0;
    for (int i = 0; i < as_rules_count(rules); i++)
        total += as_rules_get(rules, i)->nvariants;
    char *tplain = NULL;
    if (st == AS_OK)
        st = canon(target, 0, &tplain, err);
    if (st == AS_OK && !(p->v = calloc((size_t)(total ? total : 1), sizeof *p->v)))
        st = nomem(err);
    int mirror_ok = !substrate_has_centres(substrate);
    for (int i = 0; st == AS_OK && i < as_rules_count(rules); i++) {
        const as_rule *r = as_rules_get(rules, i);
        for (int k = 0; st == AS_OK && k < r->nvariants; k++) {
            as_plan_entry *e = &p->v[p->n++];
            e->rule = r;
            e->variant = &r->variants[k];
            e->tier = AS_PLAN_NONE;
            e->product = -1;
            as_reagent_match m;
            memset(&m, 0, sizeof m);
            m.rule = r;
            m.variant = e->variant;
            m.temp_c = NAN;
            as_error perr;
            as_error_clear(&perr);
            e->status = as_predict(rules, substrate, &m, &opts->predict, &e->outcome, &perr);
            if (e->status == AS_ERR_NOMEM) {
                st = nomem(err);
                break;
            }
            if (e->status != AS_OK)
                continue;
            const as_outcome *o = e->outcome;
            for (int j = 0; j < o->nproducts; j++) {
                const as_product *q = &o->products[j];
                char *plain = NULL;
                if ((st = canon(q->mol, 0, &plain, err)) != AS_OK)
                    break;
                int same = !strcmp(plain, tplain);
                free(plain);
                if (!same)
                    continue;
                stereo_cmp sc;
                if ((st = compare_stereo(target, q->mol, mirror_ok, &sc, err)) != AS_OK)
                    break;
                strv notes = {0, 0, NULL};
                int strict_bad = sc.same ? stereo_notes(&sc, q, opts, &notes) : 0;
                if (!sc.same || strict_bad) {
                    if (e->product < 0) {
                        e->stereo_differs = 1;
                        free(e->note);
                        e->note = xprintf("gives the target's constitution as %s (%s), not "
                                          "the stereoisomer drawn",
                                          q->smiles, stereo_words(q->stereo));
                    }
                    strv_free(&notes);
                    continue;
                }
                e->product = j;
                e->stereo_differs = 0;
                e->share = q->share;
                e->tier = q->role == AS_PRODUCT_MAJOR ? AS_PLAN_MAJOR : AS_PLAN_MINOR;
                free(e->note);
                e->note = notes.n ? xstrdup(notes.v[0]) : NULL;
                strv_free(&notes);
                break;
            }
        }
    }
    free(tplain);
    if (st != AS_OK) {
        as_plan_free(p);
        return st;
    }
    /* stable sort: insertion keeps table order among equals */
    for (int i = 1; i < p->n; i++) {
        as_plan_entry e = p->v[i];
        int j = i;
        while (j > 0 && tier_cmp(&p->v[j - 1], &e) > 0) {
            p->v[j] = p->v[j - 1];
            j--;
        }
        p->v[j] = e;
    }
    for (int i = 0; i < p->n; i++) {
        p->nmajor += p->v[i].tier == AS_PLAN_MAJOR;
        p->nminor += p->v[i].tier == AS_PLAN_MINOR;
    }
    *out = p;
    return AS_OK;
}
