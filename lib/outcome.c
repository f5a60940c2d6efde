/* outcome.c — one prediction: ranked products, shares, stereo, rationale, cautions.
 * Owns: which C=C reacts, product ranking and shares, rationale sentences, JSON.
 * Must not: parse user input.
 *
 * Shares. A published figure of the rule (as_rule_figure) is used when its substrate class
 * equals the site's class; otherwise the share of the two orientations is a Boltzmann
 * estimate from the score gap that addition.c reports, said to be an estimate in the
 * product's share_source. Paths within one orientation (direct vs shifted, 1,2- vs
 * 1,4-adduct) are split by the published figures in the tables below. */
#include "addsite/outcome.h"
#include "addsite/canon.h"
#include "io_int.h"
#include "status_int.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- constants */

#define R_KCAL 0.0019872 /* gas constant, kcal/(mol·K) */

/* Gas-phase hydride-affinity gaps overstate solution selectivities; the cation estimate uses
 * this fraction of the gap as the free-energy difference of the competing paths (our
 * estimate, not a measured constant). Radical and borane gaps are already in kcal/mol of
 * the competing steps and are used as they are. */
#define CATION_GAP_FRACTION 0.3

/* Products whose estimated shares differ by less than this (percentage points) have no
 * confident major (our rule of thumb). */
#define MIXTURE_BAND 10.0

/* Free cation that can shift: share of the rearranged product, by nucleophile.
 * Halide: 3-methyl-1-butene and 3,3-dimethyl-1-butene + HCl give roughly equal unrearranged
 * and rearranged chlorides (OpenStax Organic Chemistry, §7.11); HBr and HI assumed alike.
 * Water (acid hydration): the rearranged alcohol is the major product of
 * 3,3-dimethyl-1-butene (Klein, Organic Chemistry, 3rd ed., Ch. 8, from memory); no ratio is
 * published there, 75% is our estimate. */
static const struct {
    const char *nucleophile;  /* leading text of the variant's `second` group */
    double shifted_percent;
    int published;
    const char *source;
} shift_share[] = {
    {"Cl", 50.0, 1, "OpenStax Organic Chemistry, §7.11 (HCl: roughly equal unrearranged and "
                    "rearranged chlorides)"},
    {"Br", 50.0, 0, "estimate: taken as for HCl (OpenStax Organic Chemistry, §7.11, roughly "
                    "1:1)"},
    {"I", 50.0, 0, "estimate: taken as for HCl (OpenStax Organic Chemistry, §7.11, roughly "
                   "1:1)"},
    {"O", 75.0, 0, "estimate: rearranged alcohol reported as the major product (Klein, Organic "
                   "Chemistry, 3rd ed., Ch. 8, from memory); 75% is our estimate"},
};

/* 1,3-Butadiene + HBr, share of the 1,2-adduct: 71% at 0 °C, 15% at 40 °C (OpenStax Organic
 * Chemistry, §14.3). Other dienes and temperatures are estimated from these two points. */
static const struct {
    double temp_c, percent_12;
} diene_12[] = {{0.0, 71.0}, {40.0, 15.0}};
#define DIENE_SOURCE "OpenStax Organic Chemistry, §14.3 (1,3-butadiene + HBr)"

/* ---------------------------------------------------------------- small helpers */

const char *as_product_role_name(as_product_role r)
{
    switch (r) {
    case AS_PRODUCT_MINOR:
        return "minor";
    case AS_PRODUCT_MIXTURE:
        return "mixture";
    default:
        return "major";
    }
}

void as_predict_opts_init(as_predict_opts *o)
{
    o->equiv = 0.0;
    o->temp_c = NAN;
    o->min_share = 0.5;
    o->max_products = 8;
    o->rationale = 1;
    o->substrate_smiles = NULL;
}

static char *xstrdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *p = malloc(n);
    if (p)
        memcpy(p, s, n);
    return p;
}

static char *fmt(const char *f, ...) AS_PRINTF(1, 2);
static char *fmt(const char *f, ...)
{
    va_list ap;
    va_start(ap, f);
    char *p = as_fmt_alloc_v(f, ap);
    va_end(ap);
    return p;
}

/* Appends a sentence to the rationale; returns 0 on success. */
static int say(as_outcome *o, const char *f, ...) AS_PRINTF(2, 3);
static int say(as_outcome *o, const char *f, ...)
{
    va_list ap;
    va_start(ap, f);
    char *s = as_fmt_alloc_v(f, ap);
    va_end(ap);
    if (!s)
        return -1;
    char **p = realloc(o->rationale, (size_t)(o->nrationale + 1) * sizeof *p);
    if (!p) {
        free(s);
        return -1;
    }
    o->rationale = p;
    o->rationale[o->nrationale++] = s;
    return 0;
}

/* "[H]" or deuterium "[2H]": a hydrogen for ranking and regio words. */
static int is_h_group(const char *g)
{
    return g && (strcmp(g, "[H]") == 0 || strcmp(g, "[2H]") == 0);
}

/* A readable label for a group SMILES: "[H]" → "H", "O" → "OH", "OC" → "OCH3". */
static void group_label(const char *g, char *buf, size_t cap)
{
    if (!g)
        snprintf(buf, cap, "-");
    else if (strcmp(g, "[2H]") == 0)
        snprintf(buf, cap, "D");
    else if (is_h_group(g))
        snprintf(buf, cap, "H");
    else if (strcmp(g, "O") == 0)
        snprintf(buf, cap, "OH");
    else if (strcmp(g, "OC") == 0)
        snprintf(buf, cap, "OCH3");
    else if (strcmp(g, "OCC") == 0)
        snprintf(buf, cap, "OC2H5");
    else
        snprintf(buf, cap, "%s", g);
}

static double rt_kcal(double temp_c)
{
    return R_KCAL * (temp_c + 273.15);
}

/* ---------------------------------------------------------------- candidates */

typedef struct cand {
    as_mol *mol;
    char *smiles;
    char *mirror;       /* canonical SMILES of the mirror image (racemic products), or NULL */
    int enantiomers;    /* 1 when the two enantiomers came from different orientations */
    const char *face;   /* "exo", "not predicted" or "n/a" */
    double share;
    int published;
    char *src;
    as_stereo stereo;
    int rearranged;
    as_path path;
    int site;
    int first_atom, second_atom;
    const char *regio;
} cand;

typedef struct cands {
    int n, cap;
    cand *v;
} cands;

static void cand_free(cand *c)
{
    as_mol_free(c->mol);
    free(c->smiles);
    free(c->mirror);
    free(c->src);
    memset(c, 0, sizeof *c);
}

static void cands_clear(cands *l)
{
    for (int i = 0; i < l->n; i++)
        cand_free(&l->v[i]);
    free(l->v);
    memset(l, 0, sizeof *l);
}

static int cands_push(cands *l, cand *c)
{
    if (l->n == l->cap) {
        int ncap = l->cap ? l->cap * 2 : 8;
        cand *p = realloc(l->v, (size_t)ncap * sizeof *p);
        if (!p)
            return -1;
        l->v = p;
        l->cap = ncap;
    }
    l->v[l->n++] = *c;
    memset(c, 0, sizeof *c);
    return 0;
}

static const char *regio_word(const as_site *s, const as_adduct *ad, const as_rule *r,
                              const as_rule_variant *v)
{
    if (ad->path == AS_PATH_CONJUGATE)
        return "conjugate";
    if (ad->path == AS_PATH_DIENE_14)
        return "1,4";
    if (ad->path != AS_PATH_DIRECT || r->regio == AS_REGIO_NONE || r->regio == AS_REGIO_CLEAVE)
        return "n/a";
    int fh = is_h_group(v->first), shh = is_h_group(v->second);
    int x;
    if (!fh && !shh && r->regio == AS_REGIO_CATION && v->first && v->second &&
        strcmp(v->first, v->second) != 0) {
        /* halohydrin, alkoxyhalide: the nucleophile (second group, OH or OR) takes the
         * cation end; Markovnikov when that is the more substituted carbon (common practice) */
        x = ad->second_atom;
    } else if (fh == shh) {
        return "n/a";
    } else {
        x = fh ? ad->second_atom : ad->first_atom;
    }
    const as_site_end *ex = s->end[0].atom == x ? &s->end[0] : &s->end[1];
    const as_site_end *ey = s->end[0].atom == x ? &s->end[1] : &s->end[0];
    if (ex->n_heavy > ey->n_heavy)
        return "markovnikov";
    if (ex->n_heavy < ey->n_heavy)
        return "anti-markovnikov";
    return "n/a";
}

static const as_rule_figure *find_figure(const as_rule *r, const char *cls)
{
    for (int i = 0; i < r->nfigures; i++)
        if (r->figures[i].cls && strcmp(r->figures[i].cls, cls) == 0)
            return &r->figures[i];
    return NULL;
}

static double diene_12_percent(double t, int *published)
{
    *published = fabs(t - diene_12[0].temp_c) <= 2.0 || fabs(t - diene_12[1].temp_c) <= 2.0;
    if (t <= diene_12[0].temp_c)
        return diene_12[0].percent_12;
    if (t >= diene_12[1].temp_c)
        return diene_12[1].percent_12;
    double f = (t - diene_12[0].temp_c) / (diene_12[1].temp_c - diene_12[0].temp_c);
    return diene_12[0].percent_12 + f * (diene_12[1].percent_12 - diene_12[0].percent_12);
}

/* Shares of the adducts of one site run, in percent of that run; writes sources. */
static as_status shares_for_run(const as_outcome *o, const as_site *s, const as_adducts *l,
                                double *share, int *published, char **src, as_error *err)
{
    const as_rule *r = o->rule;
    const as_rule_variant *v = o->variant;
    double p_pref = 100.0;
    int pub_orient = 0;
    char *orient_src = NULL;
    int has_other = 0, alike = 0;
    const as_adduct *pref_ad = NULL, *other_ad = NULL;
    for (int i = 0; i < l->n; i++) {
        if (l->v[i].path != AS_PATH_DIRECT)
            continue;
        if (l->v[i].preferred && !pref_ad)
            pref_ad = &l->v[i];
        if (!l->v[i].preferred && !other_ad)
            other_ad = &l->v[i];
    }
    has_other = other_ad != NULL;
    alike = pref_ad && pref_ad->ends_alike;
    if (!has_other) {
        orient_src = xstrdup("one regiochemical outcome only");
    } else if (alike) {
        p_pref = 50.0;
        orient_src = fmt("estimate: the two ends of the C=C score alike (within %.1f kcal/mol), "
                         "taken as 1:1",
                         0.5);
    } else {
        const as_rule_figure *fg = find_figure(r, s->cls);
        int less = s->end[0].n_heavy < s->end[1].n_heavy   ? 0
                   : s->end[1].n_heavy < s->end[0].n_heavy ? 1
                                                           : -1;
        if (fg && less >= 0 && pref_ad) {
            int pref_on_less = pref_ad->first_atom == s->end[less].atom;
            int fig_less = strcmp(fg->first_end, "less_substituted") == 0;
            p_pref = pref_on_less == fig_less ? fg->percent : 100.0 - fg->percent;
            pub_orient = 1;
            orient_src = fmt("%s (%s alkenes%s%s)", fg->source, fg->cls,
                             fg->example ? ", measured on " : "", fg->example ? fg->example : "");
        } else {
            double gap = other_ad->gap;
            double g = r->regio == AS_REGIO_CATION ? CATION_GAP_FRACTION * gap : gap;
            double rt = rt_kcal(o->temp_c);
            p_pref = 100.0 / (1.0 + exp(-g / rt));
            if (p_pref > 99.9)
                p_pref = 99.9;
            const char *what = r->regio == AS_REGIO_CATION  ? "hydride-affinity gap"
                               : r->regio == AS_REGIO_RADICAL ? "radical C-H BDE plus attack-site gap"
                                                            : "steric gap";
            if (r->regio == AS_REGIO_CATION)
                orient_src = fmt("estimate: Boltzmann factor at %.0f °C for %.1f kcal/mol (0.3 x "
                                 "the %.1f kcal/mol %s of the two cations)",
                                 o->temp_c, g, gap, what);
            else
                orient_src = fmt("estimate: Boltzmann factor at %.0f °C for the %.1f kcal/mol %s",
                                 o->temp_c, g, what);
        }
    }
    if (!orient_src)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");

    for (int i = 0; i < l->n; i++) {
        const as_adduct *ad = &l->v[i];
        double base = ad->preferred ? p_pref : 100.0 - p_pref;
        if (alike)
            base = 50.0;
        /* paths sharing this orientation */
        int nshift = 0, n14 = 0;
        for (int j = 0; j < l->n; j++) {
            if (l->v[j].first_atom != ad->first_atom)
                continue;
            nshift += l->v[j].path == AS_PATH_SHIFT_H || l->v[j].path == AS_PATH_SHIFT_ALKYL;
            n14 += l->v[j].path == AS_PATH_DIENE_14;
        }
        double f = 1.0;
        int pub = pub_orient;
        char *s_path = NULL;
        if (nshift) {
            double sh = 50.0;
            int spub = 0;
            const char *ssrc = "estimate: 1:1";
            for (size_t k = 0; k < sizeof shift_share / sizeof shift_share[0]; k++) {
                const char *nu = v->second ? v->second : "";
                size_t len = strlen(shift_share[k].nucleophile);
                if (strncmp(nu, shift_share[k].nucleophile, len) == 0) {
                    sh = shift_share[k].shifted_percent;
                    spub = shift_share[k].published;
                    ssrc = shift_share[k].source;
                    break;
                }
            }
            int is_shift = ad->path == AS_PATH_SHIFT_H || ad->path == AS_PATH_SHIFT_ALKYL;
            f *= (is_shift ? sh : 100.0 - sh) / 100.0;
            pub = spub && (pub_orient || !has_other || p_pref >= 99.0);
            s_path = xstrdup(ssrc);
        }
        if (n14) {
            int dpub;
            double p12 = diene_12_percent(o->temp_c, &dpub);
            f *= (ad->path == AS_PATH_DIENE_14 ? 100.0 - p12 : p12) / 100.0;
            pub = dpub;
            free(s_path);
            if (dpub)
                s_path = fmt("%s at %.0f °C", DIENE_SOURCE, o->temp_c);
            else
                s_path = fmt("estimate: interpolated at %.0f °C between 71:29 (0 °C) and 15:85 "
                             "(40 °C) for the 1,2:1,4 ratio, %s",
                             o->temp_c, DIENE_SOURCE);
        }
        share[i] = base * f;
        published[i] = pub;
        if (s_path && has_other && !pub_orient && p_pref < 99.0)
            src[i] = fmt("%s; orientation %s", s_path, orient_src);
        else if (s_path)
            src[i] = xstrdup(s_path);
        else
            src[i] = xstrdup(orient_src);
        free(s_path);
        if (!src[i]) {
            free(orient_src);
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        }
    }
    free(orient_src);
    return AS_OK;
}

/* Canonical SMILES of the mirror image of m (every parity inverted) in *out; r: m's kept
 * ranking or NULL (the mirror image has the same graph). */
static as_status mirror_smiles(const as_mol *m, const as_canon_ranking *r, char **out,
                               as_error *err)
{
    *out = NULL;
    as_mol *q = as_mol_copy(m);
    if (!q)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    for (int i = 0; i < q->ntetra; i++)
        q->tetra[i].parity = q->tetra[i].parity == AS_CCW ? AS_CW : AS_CCW;
    as_status st = as_canon_smiles_ranked(q, NULL, r, out, err);
    as_mol_free(q);
    return st;
}

/* The facial word of an adduct at site s for rule r. */
static const char *face_word(const as_site *s, const as_adduct *ad, const as_rule *r)
{
    if (ad->exo)
        return "exo";
    if (s->face == AS_FACE_NONE || r->regio == AS_REGIO_CLEAVE)
        return "n/a";
    return "not predicted";
}

/* Runs the rule on site `site` of mol (sites of mol in `sites`), appending candidates with
 * shares scaled by `scale` percent. `keep` receives the adduct list for rationale use when
 * not NULL (ownership passes to the caller). */
static as_status run_site(as_outcome *o, const as_mol *mol, const as_sites *sites, int site,
                          double scale, const cand *parent, cands *outl, as_adducts **keep,
                          as_error *err)
{
    as_adducts *l = NULL;
    as_addition_opts ao;
    as_addition_opts_init(&ao);
    if (o->temp_given)
        ao.temp_c = o->temp_c;
    as_status st = as_addition_run(mol, sites, site, o->rule, o->variant, &ao, &l, err);
    if (st != AS_OK)
        return st;
    double *share = calloc((size_t)l->n + 1, sizeof *share);
    int *pub = calloc((size_t)l->n + 1, sizeof *pub);
    char **src = calloc((size_t)l->n + 1, sizeof *src);
    if (!share || !pub || !src) {
        st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        goto done;
    }
    st = shares_for_run(o, &sites->site[site], l, share, pub, src, err);
    if (st != AS_OK)
        goto done;
    for (int i = 0; i < l->n; i++) {
        as_adduct *ad = &l->v[i];
        cand c;
        memset(&c, 0, sizeof c);
        st = as_canon_smiles_ranked(ad->mol, NULL, ad->ranking, &c.smiles, err);
        if (st == AS_OK && ad->stereo == AS_STEREO_RACEMIC && ad->marked)
            st = mirror_smiles(ad->mol, ad->ranking, &c.mirror, err);
        if (st != AS_OK) {
            cand_free(&c);
            goto done;
        }
        c.face = parent ? parent->face : face_word(&sites->site[site], ad, o->rule);
        c.mol = ad->mol;
        ad->mol = NULL;
        c.share = scale * share[i] / 100.0;
        c.published = pub[i] && (!parent || parent->published);
        c.src = parent ? fmt("%s; then %s", parent->src, src[i]) : xstrdup(src[i]);
        c.stereo = ad->stereo;
        c.rearranged = ad->rearranged || (parent && parent->rearranged);
        c.path = ad->path;
        c.site = parent ? parent->site : site;
        c.first_atom = parent ? parent->first_atom : ad->first_atom;
        c.second_atom = parent ? parent->second_atom : ad->second_atom;
        c.regio = parent ? parent->regio : regio_word(&sites->site[site], ad, o->rule, o->variant);
        if (parent && parent->stereo == AS_STEREO_DIASTEREOMERS)
            c.stereo = AS_STEREO_DIASTEREOMERS;
        if (!c.src || cands_push(outl, &c)) {
            cand_free(&c);
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            goto done;
        }
    }
done:
    if (src)
        for (int i = 0; i < l->n; i++)
            free(src[i]);
    free(src);
    free(pub);
    free(share);
    if (st == AS_OK && keep)
        *keep = l;
    else
        as_adducts_free(l);
    return st;
}

/* ---------------------------------------------------------------- ranking the sites */

/* Reactivity key of a site for the rule: lower reacts first. Electrophiles (cation,
 * radical, none, cleave): the sum of the two ends' cation hydride affinities (the more
 * electron-rich C=C leaves the more stable cation; more substituted first). Boranes: the
 * summed steric demand (least hindered first). */
/* 1 when the ranking is by steric demand: boranes, and reagent sets that add H to both ends
 * (catalytic hydrogenation: less substituted C=C are reduced first, common practice). */
static int steric_ranking(const as_rule *r, const as_rule_variant *v)
{
    return r->regio == AS_REGIO_BORANE || (is_h_group(v->first) && is_h_group(v->second));
}

static double site_key(const as_site *s, const as_rule *r, const as_rule_variant *v)
{
    if (steric_ranking(r, v))
        return s->end[0].steric + s->end[1].steric;
    return s->end[0].cation_hia + s->end[1].cation_hia;
}

static as_status rank_sites(as_outcome *o, as_error *err)
{
    int n = o->sites->n;
    int *ord = malloc((size_t)n * sizeof *ord);
    if (!ord)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    for (int i = 0; i < n; i++)
        ord[i] = i;
    for (int i = 1; i < n; i++)
        for (int j = i; j > 0 && site_key(&o->sites->site[ord[j]], o->rule, o->variant) <
                                     site_key(&o->sites->site[ord[j - 1]], o->rule, o->variant);
             j--) {
            int t = ord[j];
            ord[j] = ord[j - 1];
            ord[j - 1] = t;
        }
    /* A conjugated diene reacts once as a unit for rules that add 1,4. */
    int *use = calloc((size_t)n, sizeof *use);
    if (!use) {
        free(ord);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
    int k = 0;
    int want = (int)floor(o->equiv + 1e-9);
    if (want < 1)
        want = 1;
    for (int i = 0; i < n && k < want; i++) {
        int s = ord[i];
        if (use[s])
            continue;
        use[s] = 1;
        if (o->rule->conjugate && o->sites->site[s].conj_site >= 0)
            use[o->sites->site[s].conj_site] = 1;
        ord[k++] = s;
    }
    free(use);
    o->react = ord;
    o->nreact = k;
    return AS_OK;
}

/* Site of m whose two end atoms are a and b, or -1. */
static int site_by_atoms(const as_sites *s, int a, int b)
{
    for (int i = 0; i < s->n; i++) {
        int x = s->site[i].end[0].atom, y = s->site[i].end[1].atom;
        if ((x == a && y == b) || (x == b && y == a))
            return i;
    }
    return -1;
}

/* ---------------------------------------------------------------- rationale */

static const as_site_end *end_at(const as_site *s, int atom)
{
    return s->end[0].atom == atom ? &s->end[0] : &s->end[1];
}

static int rationale_sites(as_outcome *o)
{
    const as_sites *ss = o->sites;
    const as_site *s0 = &ss->site[o->react[0]];
    if (ss->n == 1)
        return say(o, "The substrate has one C=C, C%d=C%d (%s); carbons are numbered by their "
                      "position in the input SMILES.",
                   s0->end[0].atom + 1, s0->end[1].atom + 1, s0->cls);
    char list[512] = "";
    for (int i = 0; i < ss->n; i++) {
        size_t u = strlen(list);
        snprintf(list + u, sizeof list - u, "%sC%d=C%d (%s)", i ? ", " : "",
                 ss->site[i].end[0].atom + 1, ss->site[i].end[1].atom + 1, ss->site[i].cls);
    }
    if (say(o, "The substrate has %d C=C: %s; carbons are numbered by their position in the "
               "input SMILES.",
            ss->n, list))
        return -1;
    int boranes = steric_ranking(o->rule, o->variant);
    if (o->nreact == 1 && ss->n == 2 && s0->conj_site >= 0 && o->rule->conjugate)
        return say(o, "The two C=C are conjugated: with %.0f equivalent(s) the diene reacts "
                      "once, as one unit (1,2- or 1,4-addition).",
                   o->equiv);
    if (o->nreact >= ss->n)
        return say(o, "With %.0f equivalent(s) every C=C reacts.", o->equiv);
    /* name the runner-up for comparison */
    int runner = -1;
    for (int i = 0; i < ss->n; i++) {
        int used = 0;
        for (int k = 0; k < o->nreact; k++)
            used |= o->react[k] == i;
        if (!used && (o->rule->conjugate ? i != s0->conj_site : 1)) {
            if (runner < 0 ||
                site_key(&ss->site[i], o->rule, o->variant) <
                    site_key(&ss->site[runner], o->rule, o->variant))
                runner = i;
        }
    }
    if (runner < 0)
        return 0;
    const as_site *sr = &ss->site[runner];
    if (boranes)
        return say(o, "With %.0f equivalent(s) C%d=C%d reacts first: it is the least hindered "
                      "(summed steric demand %.2f against %.2f methyl equivalents at C%d=C%d); "
                      "the other C=C is kept.",
                   o->equiv, s0->end[0].atom + 1, s0->end[1].atom + 1, site_key(s0, o->rule, o->variant),
                   site_key(sr, o->rule, o->variant), sr->end[0].atom + 1, sr->end[1].atom + 1);
    if (fabs(site_key(s0, o->rule, o->variant) - site_key(sr, o->rule, o->variant)) < 1.0)
        return say(o, "With %.0f equivalent(s) C%d=C%d is taken first, but C%d=C%d scores the "
                      "same (summed cation hydride affinities %.0f kcal/mol each): expect both "
                      "to react, not a selective reaction at one C=C.",
                   o->equiv, s0->end[0].atom + 1, s0->end[1].atom + 1, sr->end[0].atom + 1,
                   sr->end[1].atom + 1, site_key(s0, o->rule, o->variant));
    return say(o, "With %.0f equivalent(s) C%d=C%d reacts first: it is the more electron-rich "
                  "(summed cation hydride affinities of its ends %.0f against %.0f kcal/mol at "
                  "C%d=C%d; more substituted alkenes react faster with electrophiles); the "
                  "other C=C is kept.",
               o->equiv, s0->end[0].atom + 1, s0->end[1].atom + 1, site_key(s0, o->rule, o->variant),
               site_key(sr, o->rule, o->variant), sr->end[0].atom + 1, sr->end[1].atom + 1);
}

static int rationale_mechanism(as_outcome *o, const as_adducts *l)
{
    const as_rule *r = o->rule;
    const as_rule_variant *v = o->variant;
    const as_site *s = &o->sites->site[o->react[0]];
    const as_adduct *pref = NULL, *other = NULL, *shift = NULL, *d14 = NULL, *conj = NULL;
    for (int i = 0; i < l->n; i++) {
        const as_adduct *a = &l->v[i];
        if (a->path == AS_PATH_DIRECT || a->path == AS_PATH_CLEAVE) {
            if (a->preferred && !pref)
                pref = a;
            else if (!a->preferred && !other)
                other = a;
        } else if ((a->path == AS_PATH_SHIFT_H || a->path == AS_PATH_SHIFT_ALKYL) && !shift) {
            shift = a;
        } else if (a->path == AS_PATH_DIENE_14 && !d14) {
            d14 = a;
        } else if (a->path == AS_PATH_CONJUGATE && !conj) {
            conj = a;
        }
    }
    char g1[32], g2[32];
    group_label(v->first, g1, sizeof g1);
    group_label(v->second, g2, sizeof g2);
    if (conj) {
        const as_site_end *acc = end_at(s, conj->first_atom);
        static const char *const acc_names[] = {"", "carbonyl", "nitrile", "nitro",
                                                "perfluoroalkyl", "sulfonyl"};
        return say(o, "C%d carries a %s group, so %s adds conjugately (1,4): the proton goes to "
                      "the acceptor end (through the enol) and ends on C%d, and %s bonds to the "
                      "beta carbon C%d; no free carbocation forms next to the acceptor.",
                   conj->first_atom + 1, acc_names[acc->acceptor], v->name,
                   conj->first_atom + 1, g2, conj->second_atom + 1);
    }
    if (!pref)
        return 0;
    int c1 = pref->first_atom, c2 = pref->second_atom;
    const as_site_end *e1 = end_at(s, c1), *e2 = end_at(s, c2);
    /* symmetric C=C: both orientations gave one product (the same molecule, or the two
     * enantiomers of one product, merged) */
    int one_product = o->nproducts == 1;
    switch (r->regio) {
    case AS_REGIO_CATION:
        if (pref->ends_alike) {
            if (say(o, "Both ends give cations of the same kind (C%d: %s, %.0f kcal/mol; C%d: "
                       "%s, %.0f kcal/mol estimated hydride ion affinity), so %s goes to either "
                       "carbon%s.",
                    e1->atom + 1, e1->cation_kind, e1->cation_hia, e2->atom + 1,
                    e2->cation_kind, e2->cation_hia, g1,
                    one_product ? ", and both orientations give the same product"
                                : " and the two regioisomers form in similar amounts: no major "
                                  "product"))
                return -1;
        } else if (r->shifts) {
            if (say(o, "%s adds to C%d so that the %s forms at C%d, a %s cation (estimated "
                       "hydride ion affinity %.0f kcal/mol, against %.0f for the %s cation at "
                       "C%d); %s then bonds to C%d (Markovnikov).",
                    g1, c1 + 1, r->intermediate, c2 + 1, e2->cation_kind, e2->cation_hia,
                    e1->cation_hia, e1->cation_kind, c1 + 1, g2, c2 + 1))
                return -1;
        } else {
            if (say(o, "The electrophile bridges C%d and C%d as a %s; %s opens it from the "
                       "opposite face at C%d, the carbon better able to carry positive charge (%s, estimated hydride ion "
                       "affinity %.0f against %.0f kcal/mol at C%d), and %s ends on C%d. No free "
                       "carbocation forms, so the skeleton does not rearrange.",
                    c1 + 1, c2 + 1, r->intermediate, g2, c2 + 1, e2->cation_kind,
                    e2->cation_hia, e1->cation_hia, c1 + 1, g1, c1 + 1))
                return -1;
        }
        break;
    case AS_REGIO_RADICAL:
        if (say(o, "%s adds to C%d, the less hindered end, to give the %s radical at C%d "
                   "(estimated C-H bond dissociation energy %.1f kcal/mol against %.1f for a "
                   "radical at C%d, Blanksby & Ellison 2003 values); the radical then takes %s "
                   "at C%d (anti-Markovnikov). Intermediate: %s.",
                g1, c1 + 1, e2->cation_kind, c2 + 1, e2->radical_bde, e1->radical_bde, c1 + 1,
                g2, c2 + 1, r->intermediate))
            return -1;
        break;
    case AS_REGIO_BORANE:
        if (pref->ends_alike) {
            if (say(o, "Both ends are about equally hindered (steric demand %.2f and %.2f methyl "
                       "equivalents): boron goes to either carbon%s.",
                    e1->steric, e2->steric,
                    one_product ? ", and both orientations give the same product"
                                : " and the two alcohols form in similar amounts"))
                return -1;
        } else if (say(o, "In the %s boron bonds to C%d, the less hindered carbon (steric demand "
                          "%.2f against %.2f methyl equivalents at C%d; reagent bulk %.1f), and H "
                          "to C%d in the same step; oxidation then puts %s where boron was, with "
                          "retention (anti-Markovnikov, no carbocation, no rearrangement).",
                       r->intermediate, c1 + 1, e1->steric, e2->steric, c2 + 1,
                       r->bulk > 0 ? r->bulk : 1.0, c2 + 1, g1))
            return -1;
        break;
    case AS_REGIO_NONE:
        /* the rule's summary states the mechanism in a chemist's words */
        if (v->bridge) {
            if (say(o, "One %s atom bridges C%d and C%d (%s addition). %s", v->bridge, c1 + 1,
                    c2 + 1, r->stereo == AS_ADD_ANTI ? "anti" : "syn", r->summary))
                return -1;
        } else if (say(o, "%s and %s add to C%d and C%d (%s addition). %s", g1,
                        v->second ? g2 : g1, c1 + 1, c2 + 1,
                        r->stereo == AS_ADD_SYN    ? "syn"
                        : r->stereo == AS_ADD_ANTI ? "anti"
                                                   : "non-stereospecific",
                        r->summary)) {
            return -1;
        }
        break;
    case AS_REGIO_CLEAVE:
        if (say(o, "The C%d=C%d bond is cut (via the %s); each carbon becomes a carbonyl carbon, "
                   "and with %s work-up %s.",
                c1 + 1, c2 + 1, r->intermediate, v->workup ? v->workup : "the usual",
                v->workup && strcmp(v->workup, "oxidative") == 0
                    ? "a carbon that carried H becomes a carboxylic acid"
                    : "a carbon that carried H becomes an aldehyde"))
            return -1;
        break;
    }
    if (shift) {
        if (say(o, "The %s cation at C%d can become a more stable cation at C%d by a 1,2-%s "
                   "shift (estimated gain %.0f kcal/mol of hydride ion affinity); the direct and "
                   "the rearranged product are both listed.",
                end_at(s, shift->cation_atom)->cation_kind, shift->cation_atom + 1,
                shift->shift_to + 1, shift->path == AS_PATH_SHIFT_H ? "hydride" : "alkyl",
                shift->shift_gain))
            return -1;
    }
    if (d14) {
        if (say(o, "C%d=C%d is conjugated with a second C=C: the allylic cation is shared by "
                   "C%d and C%d, giving the 1,2-adduct (%s on C%d) and the 1,4-adduct (%s on C%d, "
                   "C=C moved); low temperature favours the 1,2-adduct (kinetic), higher "
                   "temperature the 1,4-adduct (thermodynamic); %.0f °C used.",
                s->end[0].atom + 1, s->end[1].atom + 1, d14->cation_atom + 1,
                d14->second_atom + 1, g2, d14->cation_atom + 1, g2, d14->second_atom + 1,
                o->temp_c))
            return -1;
    }
    /* stereo */
    if (pref->exo) {
        if (say(o, "C%d=C%d is the two-carbon bridge of a bicyclo[2.2.1] ring system (norbornene "
                   "type): the reagent approaches from the exo face, syn to the one-carbon bridge "
                   "C%d, since the endo face is shielded by the endo hydrogens of the other "
                   "two-carbon bridge (%s). The new bonds are written exo with @/@@; the product "
                   "is %s.",
                s->end[0].atom + 1, s->end[1].atom + 1, s->short_bridge[0] + 1,
                r->facial_source,
                pref->stereo == AS_STEREO_MESO      ? "meso (achiral)"
                : pref->stereo == AS_STEREO_RACEMIC ? "racemic (both enantiomers)"
                : pref->stereo == AS_STEREO_SINGLE  ? "a single stereoisomer (the substrate's "
                                                      "configuration is kept)"
                : pref->stereo == AS_STEREO_DIASTEREOMERS
                    ? "exo at the new centres, but their relation to other stereocentres of "
                      "the substrate is not fixed (diastereomers)"
                    : "without new stereocentres"))
            return -1;
        return 0;
    }
    int open_face = pref->stereo == AS_STEREO_DIASTEREOMERS && r->regio != AS_REGIO_CLEAVE;
    if (s->face == AS_FACE_EXO && r->regio != AS_REGIO_CLEAVE) {
        if (r->facial && strcmp(r->facial, "not_predicted") == 0) {
            if (say(o, "C%d=C%d is the two-carbon bridge of a bicyclo[2.2.1] ring system "
                       "(norbornene type): for %s the outcome there is not predicted: %s.",
                    s->end[0].atom + 1, s->end[1].atom + 1, r->id, r->facial_source))
                return -1;
        } else if (open_face &&
                   say(o, "C%d=C%d is the two-carbon bridge of a bicyclo[2.2.1] ring system "
                          "(norbornene type); which face %s attacks there is not predicted.",
                       s->end[0].atom + 1, s->end[1].atom + 1, r->id)) {
            return -1;
        }
    } else if (s->face == AS_FACE_UNCLEAR && open_face) {
        int b[3] = {2, s->bridge_len[0], s->bridge_len[1]};
        for (int i = 0; i < 3; i++)
            for (int j = i + 1; j < 3; j++)
                if (b[j] > b[i]) {
                    int t = b[i];
                    b[i] = b[j];
                    b[j] = t;
                }
        if (say(o, "C%d=C%d bridges the two bridgeheads of a bicyclo[%d.%d.%d] ring system; "
                   "neither face is clearly the more open one in our model (or the one-carbon "
                   "bridge is substituted), so the facial outcome is not predicted.",
                s->end[0].atom + 1, s->end[1].atom + 1, b[0], b[1], b[2]))
            return -1;
    }
    if (pref->marked) {
        int low_t_radical = r->regio == AS_REGIO_RADICAL && r->stereo == AS_ADD_NONE;
        if (low_t_radical &&
            say(o, "At %.0f °C radical addition to a ring C=C is anti (Goering, Abell & Aycock, "
                   "J. Am. Chem. Soc. 1952, 74, 3588, from memory; reference not verified).",
                o->temp_c))
            return -1;
        if (say(o, "%s addition to the %s C=C fixes the relative configuration of the new "
                   "stereocentres (written with @/@@); the product is %s.",
                r->stereo == AS_ADD_SYN ? "Syn" : "Anti",
                s->geometry == AS_GEOM_RING    ? "ring"
                : s->geometry == AS_GEOM_CIS   ? "cis"
                : s->geometry == AS_GEOM_TRANS ? "trans"
                                               : "",
                pref->meso ? "meso (achiral)" : "racemic (both enantiomers)"))
            return -1;
    } else if (pref->cis_trans) {
        if (say(o, "No new stereocentre, but the product's ring now carries substituents that "
                   "can be cis or trans to each other: it forms as a mixture of the two "
                   "isomers, not assigned here."))
            return -1;
    } else if (pref->new_centres == 1 && pref->stereo == AS_STEREO_RACEMIC) {
        /* with a shift listed, the sentence is about the direct product only */
        int shifted = 0;
        for (int i = 0; i < o->nproducts; i++)
            shifted |= o->products[i].rearranged;
        if (say(o, "One new stereocentre forms from an achiral substrate: the %s is racemic.",
                shifted && !pref->rearranged ? "unrearranged product" : "product"))
            return -1;
    } else if (pref->new_centres >= 2 && r->stereo == AS_ADD_NONE) {
        if (say(o, "No stereo control (%s): the new stereocentres form as a mixture of "
                   "diastereomers.",
                r->intermediate))
            return -1;
    } else if (pref->new_centres >= 1 && pref->stereo == AS_STEREO_DIASTEREOMERS &&
               s->geometry != AS_GEOM_UNKNOWN) {
        if (say(o, "The product has further stereocentres (kept from the substrate, or ring "
                   "atoms that become stereocentres) whose relation to the new ones is not "
                   "fixed: the new stereocentres are left unassigned (a mixture of "
                   "diastereomers%s).",
                pref->new_centres >= 2 && r->stereo != AS_ADD_NONE
                    ? r->stereo == AS_ADD_SYN ? ", each from syn addition"
                                              : ", each from anti addition"
                    : ""))
            return -1;
    } else if (pref->new_centres >= 2) {
        if (say(o, "The C=C geometry is not given (no / or \\ marks), so the relative "
                   "configuration of the new stereocentres is not assigned."))
            return -1;
    }
    return 0;
}

/* ---------------------------------------------------------------- predict */

static int cmp_share(const void *a, const void *b)
{
    const cand *x = a, *y = b;
    if (x->share != y->share)
        return x->share < y->share ? 1 : -1;
    return strcmp(x->smiles, y->smiles);
}

/* Merges candidates with equal SMILES (shares add), and the two enantiomers of a racemic
 * product that two orientations reach (hydroboration of norbornene at either carbon): a
 * racemate is one product, written as one enantiomer. */
static void dedupe(cands *l)
{
    for (int i = 0; i < l->n; i++) {
        for (int j = i + 1; j < l->n; j++) {
            int enant = l->v[i].mirror && l->v[j].stereo == AS_STEREO_RACEMIC &&
                        l->v[i].stereo == AS_STEREO_RACEMIC &&
                        strcmp(l->v[i].mirror, l->v[j].smiles) == 0;
            if (!enant && strcmp(l->v[i].smiles, l->v[j].smiles) != 0)
                continue;
            cand *a = &l->v[i], *b = &l->v[j];
            if (enant) {
                a->enantiomers = b->enantiomers = 1;
                char *ns = xstrdup("both orientations give this product, one as each "
                                   "enantiomer (racemate)");
                if (ns) {
                    free(a->src);
                    a->src = ns;
                }
            }
            if (b->share > a->share) { /* keep the description of the larger path */
                cand t = *a;
                *a = *b;
                *b = t;
            }
            a->share += b->share;
            a->published = a->published && b->published;
            cand_free(b);
            l->v[j] = l->v[--l->n];
            j--;
        }
    }
}

as_status as_predict(const as_rules *rules, const as_mol *substrate,
                     const as_reagent_match *match, const as_predict_opts *opts,
                     as_outcome **out, as_error *err)
{
    (void)rules;
    *out = NULL;
    if (!substrate || !match || !match->rule || !match->variant)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "as_predict needs a substrate and a rule");
    if (!substrate->perceived)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "the substrate must be perceived");
    as_predict_opts def;
    if (!opts) {
        as_predict_opts_init(&def);
        opts = &def;
    }
    as_outcome *o = calloc(1, sizeof *o);
    if (!o)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    o->rule = match->rule;
    o->variant = match->variant;
    o->cautions = match->rule->hazards;
    o->ncautions = match->rule->nhazards;
    if (!isnan(opts->temp_c)) {
        o->temp_c = opts->temp_c;
        o->temp_given = 1;
    } else if (match->has_temp) {
        o->temp_c = match->temp_c;
        o->temp_given = 1;
    } else {
        o->temp_c = 25.0;
    }
    o->equiv = opts->equiv > 0 ? opts->equiv : match->equiv > 0 ? match->equiv : 1.0;
    cands cl = {0, 0, NULL}, next = {0, 0, NULL};
    as_adducts *first_run = NULL;
    as_status st = AS_OK;
    if (opts->substrate_smiles) {
        if (!(o->substrate = xstrdup(opts->substrate_smiles)))
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    } else {
        st = as_canon_smiles(substrate, NULL, &o->substrate, err);
    }
    if (st != AS_OK)
        goto fail;
    st = as_sites_find(substrate, &o->sites, err);
    if (st != AS_OK)
        goto fail;
    if (o->sites->n == 0) {
        st = as_error_set(err, AS_ERR_NO_SITE, -1, -1,
                          "%s has no C=C outside aromatic rings: nothing for %s to add to",
                          o->substrate, o->rule->id);
        goto fail;
    }
    st = rank_sites(o, err);
    if (st != AS_OK)
        goto fail;

    st = run_site(o, substrate, o->sites, o->react[0], 100.0, NULL, &cl, &first_run, err);
    if (st != AS_OK)
        goto fail;
    /* Further equivalents: each product so far reacts at the next site. */
    for (int k = 1; k < o->nreact; k++) {
        const as_site *sk = &o->sites->site[o->react[k]];
        for (int i = 0; i < cl.n; i++) {
            as_sites *ps = NULL;
            st = as_sites_find(cl.v[i].mol, &ps, err);
            if (st != AS_OK)
                goto fail;
            int j = site_by_atoms(ps, sk->end[0].atom, sk->end[1].atom);
            if (j < 0) {
                as_sites_free(ps);
                if (cands_push(&next, &cl.v[i])) {
                    st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
                    goto fail;
                }
                continue;
            }
            st = run_site(o, cl.v[i].mol, ps, j, cl.v[i].share, &cl.v[i], &next, NULL, err);
            as_sites_free(ps);
            if (st != AS_OK)
                goto fail;
            cand_free(&cl.v[i]);
        }
        cl.n = 0;
        cands_clear(&cl);
        cl = next;
        memset(&next, 0, sizeof next);
        dedupe(&cl);
    }
    dedupe(&cl);
    qsort(cl.v, (size_t)cl.n, sizeof *cl.v, cmp_share);

    /* keep: published or above min_share; at most max_products */
    int keep = 0;
    for (int i = 0; i < cl.n; i++) {
        int ok = (cl.v[i].share >= opts->min_share ||
                  (cl.v[i].published && cl.v[i].share >= 0.1)) &&
                 (opts->max_products <= 0 || keep < opts->max_products);
        if (ok)
            cl.v[keep++] = cl.v[i];
        else
            cand_free(&cl.v[i]);
    }
    cl.n = keep;
    o->products = calloc((size_t)(keep ? keep : 1), sizeof *o->products);
    if (!o->products) {
        st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        goto fail;
    }
    int mixture = keep >= 2 && cl.v[0].share - cl.v[1].share < MIXTURE_BAND;
    o->mixture = mixture;
    for (int i = 0; i < keep; i++) {
        as_product *p = &o->products[i];
        cand *c = &cl.v[i];
        p->smiles = c->smiles;
        p->mol = c->mol;
        p->share_source = c->src;
        c->smiles = c->src = NULL;
        c->mol = NULL;
        p->share = round(c->share * 10.0) / 10.0;
        p->share_published = c->published;
        p->stereo = c->stereo;
        p->rearranged = c->rearranged;
        p->path = c->path;
        p->regio = c->regio;
        p->site = c->site;
        p->first_atom = c->first_atom;
        p->second_atom = c->second_atom;
        p->face = c->face ? c->face : "n/a";
        p->enantiomers_merged = c->enantiomers;
        if (mixture)
            p->role = cl.v[0].share - c->share < MIXTURE_BAND ? AS_PRODUCT_MIXTURE
                                                              : AS_PRODUCT_MINOR;
        else
            p->role = i == 0 ? AS_PRODUCT_MAJOR : AS_PRODUCT_MINOR;
    }
    o->nproducts = keep;
    cands_clear(&cl);

    if (!opts->rationale)
        goto done;
    if (rationale_sites(o) || rationale_mechanism(o, first_run) ||
        (o->nreact > 1 &&
         say(o, "The next C=C (by the same ranking) then reacts in the same way with the "
                "further equivalent(s); shares multiply.")) ||
        (!o->temp_given && o->rule->conjugate &&
         say(o, "No temperature given: 25 °C assumed.")) ||
        (o->mixture && say(o, "The top products form in similar amounts: report them as a "
                              "mixture, not a single major product."))) {
        st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        goto fail;
    }
    for (int i = 0; i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        if (p->enantiomers_merged &&
            say(o, "The two orientations give the two enantiomers of %s: one product, formed "
                   "as the racemate.",
                p->smiles)) {
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            goto fail;
        }
    }
    for (int i = 0; i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        if (say(o, "Share of %s: %.1f%% (%s).", p->smiles, p->share, p->share_source)) {
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            goto fail;
        }
    }
done:
    as_adducts_free(first_run);
    *out = o;
    return AS_OK;
fail:
    as_adducts_free(first_run);
    cands_clear(&cl);
    cands_clear(&next);
    as_outcome_free(o);
    return st;
}

void as_outcome_free(as_outcome *o)
{
    if (!o)
        return;
    free(o->substrate);
    as_sites_free(o->sites);
    free(o->react);
    for (int i = 0; i < o->nproducts; i++) {
        free(o->products[i].smiles);
        free(o->products[i].share_source);
        as_mol_free(o->products[i].mol);
    }
    free(o->products);
    for (int i = 0; i < o->nrationale; i++)
        free(o->rationale[i]);
    free(o->rationale);
    free(o);
}

/* ---------------------------------------------------------------- JSON */

static const char *path_name(as_path p)
{
    switch (p) {
    case AS_PATH_SHIFT_H:
        return "1,2-hydride shift";
    case AS_PATH_SHIFT_ALKYL:
        return "1,2-alkyl shift";
    case AS_PATH_DIENE_14:
        return "1,4-addition";
    case AS_PATH_CONJUGATE:
        return "conjugate addition";
    case AS_PATH_CLEAVE:
        return "cleavage";
    default:
        return "direct";
    }
}

as_status as_outcome_json(const as_outcome *o, int pretty, char **out, as_error *err)
{
    *out = NULL;
    cJSON *root = cJSON_CreateObject();
    if (!root)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int ok = 1;
    ok &= cJSON_AddStringToObject(root, "substrate", o->substrate) != NULL;
    ok &= cJSON_AddStringToObject(root, "reaction", o->rule->id) != NULL;
    ok &= cJSON_AddStringToObject(root, "reagents", o->variant->name) != NULL;
    if (o->variant->reagent_smiles)
        ok &= cJSON_AddStringToObject(root, "reagent_smiles", o->variant->reagent_smiles) != NULL;
    else
        ok &= cJSON_AddNullToObject(root, "reagent_smiles") != NULL;
    ok &= cJSON_AddNumberToObject(root, "temperature_c", o->temp_c) != NULL;
    ok &= cJSON_AddBoolToObject(root, "temperature_given", o->temp_given) != NULL;
    ok &= cJSON_AddNumberToObject(root, "equivalents", o->equiv) != NULL;
    ok &= cJSON_AddBoolToObject(root, "mixture", o->mixture) != NULL;
    cJSON *sites = cJSON_AddArrayToObject(root, "sites");
    ok &= sites != NULL;
    for (int i = 0; ok && i < o->sites->n; i++) {
        const as_site *s = &o->sites->site[i];
        cJSON *js = cJSON_CreateObject();
        ok &= js && cJSON_AddItemToArray(sites, js);
        if (!ok)
            break;
        int reacts = 0;
        for (int k = 0; k < o->nreact; k++)
            reacts |= o->react[k] == i;
        int atoms[2] = {s->end[0].atom + 1, s->end[1].atom + 1};
        cJSON *ja = cJSON_CreateIntArray(atoms, 2);
        ok &= ja && cJSON_AddItemToObject(js, "atoms", ja);
        ok &= cJSON_AddStringToObject(js, "class", s->cls) != NULL;
        ok &= cJSON_AddBoolToObject(js, "reacts", reacts) != NULL;
        cJSON *ends = cJSON_AddArrayToObject(js, "ends");
        ok &= ends != NULL;
        for (int k = 0; ok && k < 2; k++) {
            const as_site_end *e = &s->end[k];
            cJSON *je = cJSON_CreateObject();
            ok &= je && cJSON_AddItemToArray(ends, je);
            if (!ok)
                break;
            ok &= cJSON_AddNumberToObject(je, "atom", e->atom + 1) != NULL;
            ok &= cJSON_AddNumberToObject(je, "cation_hia_kcal", e->cation_hia) != NULL;
            ok &= cJSON_AddStringToObject(je, "cation_kind", e->cation_kind) != NULL;
            ok &= cJSON_AddNumberToObject(je, "radical_bde_kcal", e->radical_bde) != NULL;
            ok &= cJSON_AddNumberToObject(je, "steric", e->steric) != NULL;
        }
    }
    cJSON *prods = cJSON_AddArrayToObject(root, "products");
    ok &= prods != NULL;
    for (int i = 0; ok && i < o->nproducts; i++) {
        const as_product *p = &o->products[i];
        cJSON *jp = cJSON_CreateObject();
        ok &= jp && cJSON_AddItemToArray(prods, jp);
        if (!ok)
            break;
        ok &= cJSON_AddStringToObject(jp, "smiles", p->smiles) != NULL;
        ok &= cJSON_AddStringToObject(jp, "role", as_product_role_name(p->role)) != NULL;
        ok &= cJSON_AddNumberToObject(jp, "share", p->share) != NULL;
        ok &= cJSON_AddStringToObject(jp, "share_source", p->share_source) != NULL;
        ok &= cJSON_AddBoolToObject(jp, "share_published", p->share_published) != NULL;
        ok &= cJSON_AddStringToObject(jp, "stereo", as_stereo_name(p->stereo)) != NULL;
        ok &= cJSON_AddBoolToObject(jp, "rearranged", p->rearranged) != NULL;
        ok &= cJSON_AddStringToObject(jp, "regio", p->regio) != NULL;
        ok &= cJSON_AddStringToObject(jp, "path", path_name(p->path)) != NULL;
        ok &= cJSON_AddStringToObject(jp, "face", p->face ? p->face : "n/a") != NULL;
    }
    cJSON *rat = cJSON_AddArrayToObject(root, "rationale");
    ok &= rat != NULL;
    for (int i = 0; ok && i < o->nrationale; i++) {
        cJSON *s = cJSON_CreateString(o->rationale[i]);
        ok &= s && cJSON_AddItemToArray(rat, s);
    }
    cJSON *cau = cJSON_AddArrayToObject(root, "cautions");
    ok &= cau != NULL;
    for (int i = 0; ok && i < o->ncautions; i++) {
        cJSON *s = cJSON_CreateString(o->cautions[i]);
        ok &= s && cJSON_AddItemToArray(cau, s);
    }
    char *text = ok ? (pretty ? cJSON_Print(root) : cJSON_PrintUnformatted(root)) : NULL;
    cJSON_Delete(root);
    if (!text)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory writing JSON");
    *out = text;
    return AS_OK;
}
