/* sites.c — the C=C sites of a perceived molecule and the scores of their carbons.
 * Owns: finding non-aromatic C=C, describing and scoring each end carbon.
 * Must not: know reagents or rules.
 *
 * The scores are additive estimates built from published reference values:
 *  - carbocation stability: gas-phase hydride ion affinities (HIA) of the parent cations,
 *    corrected for aryl (benzyl), vinyl (allyl), α-heteroatom donors, α-acceptors, and
 *    Brown–Okamoto σ+ of ring substituents on an aryl group;
 *  - radical stability: C–H bond dissociation energies (Blanksby & Ellison 2003);
 *  - steric demand: methyl equivalents of the substituents (our estimate, calibrated so that
 *    BH3 gives the published ~94:6 on a monosubstituted alkene, see lib/addition.c).
 * Every number below names its source; "from memory" marks a value recalled without the
 * reference at hand, "estimate" a value we chose ourselves. */
#include "addsite/sites.h"
#include "status_int.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- constants */

/* Hydride ion affinity of the parent cation by the number of carbon substituents on the
 * cationic carbon, kcal/mol (R+ + H− → RH). One series, as compiled in public material
 * quoting the gas-phase measurements (status "secondary"): CH3+ 312, C2H5+ 273,
 * (CH3)2CH+ 246, (CH3)3C+ 231. */
static const double hia_by_degree[4] = {312.0, 273.0, 246.0, 231.0};

/* Corrections to the HIA for one substituent in place of an alkyl group, kcal/mol. */
#define HIA_ARYL (-35.0)       /* benzyl 238 vs ethyl 273 (benzyl value from memory) */
#define HIA_ARYL_2ND (-17.0)   /* a second aryl group: half of the first (estimate) */
#define HIA_VINYL (-17.0)      /* allyl 256 vs ethyl 273 (allyl value from memory) */
#define HIA_ALPHA_O (-35.0)    /* α-OR (oxocarbenium): methoxymethyl cation ~240 vs ethyl
                                  (from memory, not re-checked) */
#define HIA_ALPHA_N (-55.0)    /* α-NR2 (iminium): stronger π donor than O (estimate) */
#define HIA_ALPHA_S (-30.0)    /* α-SR (thiocarbenium) (estimate) */
#define HIA_ALPHA_F (-12.0)    /* α-F: π donation outweighs induction in the gas phase
                                  (estimate, order from memory of CH2F+ vs CH3+) */
#define HIA_ALPHA_X (-18.0)    /* α-Cl, Br, I (estimate, order from memory of CH2Cl+) */
#define HIA_ALPHA_CO (20.0)    /* α-C=O destabilises the cation (estimate; α-carbonyl
                                  cations are strongly retarded in solvolysis, from memory) */
#define HIA_ALPHA_CN (15.0)    /* α-C≡N (estimate; CN partly offsets by π donation) */
#define HIA_ALPHA_CF (25.0)    /* α-CF3 / perfluoroalkyl (estimate, from memory of α-CF3
                                  cation solvolysis studies) */
#define HIA_ALPHA_NO2 (30.0)   /* α-NO2 (estimate) */
#define HIA_ALPHA_SO2 (25.0)   /* α-SO2R (estimate) */
#define HIA_BETA_X (6.0)       /* halogen on a neighbouring sp3 carbon: inductive (estimate) */
#define HIA_BETA_O (3.0)       /* OH/OR on a neighbouring sp3 carbon (allylic alcohols and
                                  ethers): inductive, scaled from HIA_BETA_X by the inductive
                                  constants sigma_I of OH (~0.25) and Cl (~0.47) (estimate;
                                  sigma_I values from memory) */

/* Brown–Okamoto: log(k/k0) = ρσ+ with ρ = −4.54 for cumyl chloride solvolysis in 90%
 * aqueous acetone at 25 °C (Brown & Okamoto, J. Am. Chem. Soc. 1958, 80, 4979; ρ from
 * memory). As a free-energy change: ΔG = −2.303·RT·ρ·σ+ = +6.19·σ+ kcal/mol at 298 K. */
#define BO_RHO (-4.54)
#define BO_KCAL_PER_SIGMA (-1.3642 * BO_RHO)

/* C–H bond dissociation energies, kcal/mol (Blanksby & Ellison, Acc. Chem. Res. 2003, 36,
 * 255): CH3–H 105.0 (confirmed), C2H5–H 101.1 (confirmed), (CH3)2CH–H 98.6 (secondary),
 * (CH3)3C–H 96.5 (secondary). */
static const double bde_by_degree[4] = {105.0, 101.1, 98.6, 96.5};
#define BDE_ARYL (-11.4)       /* benzyl C–H 89.7 (from memory) vs ethyl 101.1 */
#define BDE_VINYL (-12.3)      /* allyl C–H 88.8 (from memory) vs ethyl 101.1 */
#define BDE_ALPHA_O (-5.0)     /* CH3OCH2–H ~96 (from memory) */
#define BDE_ALPHA_N (-8.0)     /* α-amino C–H ~93 (from memory) */
#define BDE_ALPHA_S (-6.0)     /* α-thio C–H (estimate) */
#define BDE_ALPHA_X (-2.0)     /* α-halogen (estimate) */
#define BDE_ALPHA_CO (-5.0)    /* CH3C(O)CH2–H ~96 (from memory) */
#define BDE_ALPHA_CN (-4.5)    /* NCCH2–H ~97 (from memory) */
#define BDE_ALPHA_CF (3.0)     /* α-CF3 raises the C–H BDE by a few kcal/mol (CF3CH2–H
                                  above C2H5–H, from memory); 3.0 used (estimate) */

/* Steric demand of a substituent, methyl equivalents (estimate, see file comment). */
#define ST_ALKYL 1.0           /* CH3 or CH2R */
#define ST_BRANCH 0.35         /* each further branch on an sp3 substituent (CHR2, CR3) */
#define ST_ARYL 0.75           /* planar aryl */
#define ST_VINYL 0.8
#define ST_HETERO 0.6          /* OR, NR2, SR, Cl, Br, I */
#define ST_F 0.3
#define ST_ACCEPTOR 0.8        /* C=O, CN, CF3, NO2 */

/* Brown–Okamoto σ+ of ring substituents by position relative to the vinyl group.
 * Columns: name, σ+ para, σ+ meta, status. Para values of OMe, Me, F, Cl, CF3, NO2 from
 * Brown & Okamoto 1958 as compiled by Hansch, Leo & Taft, Chem. Rev. 1991, 91, 165
 * (secondary); the other values from memory. ORDER SUBST: keep in step with enum below. */
enum { SUB_OR, SUB_OH, SUB_ALKYL, SUB_F, SUB_CL, SUB_BR, SUB_I, SUB_CF3, SUB_NO2, SUB_NH2,
       SUB_NR2, SUB_ACYL, SUB_CN, SUB_COUNT };
static const struct {
    const char *name;
    double para, meta;
} sigma_plus[SUB_COUNT] = {
    {"OMe", -0.78, 0.05},   /* para secondary; meta from memory */
    {"OH", -0.92, 0.12},    /* from memory */
    {"Me", -0.31, -0.07},   /* para secondary; meta from memory */
    {"F", -0.07, 0.35},     /* para secondary; meta from memory */
    {"Cl", 0.11, 0.40},     /* para secondary; meta from memory */
    {"Br", 0.15, 0.41},     /* from memory */
    {"I", 0.14, 0.36},      /* from memory */
    {"CF3", 0.61, 0.52},    /* para secondary; meta from memory */
    {"NO2", 0.79, 0.67},    /* para secondary; meta from memory */
    {"NH2", -1.30, -0.16},  /* from memory */
    {"NMe2", -1.70, -0.16}, /* from memory */
    {"COMe", 0.50, 0.38},   /* from memory */
    {"CN", 0.66, 0.56},     /* from memory */
};

/* ---------------------------------------------------------------- atom helpers */

/* Number of neighbours of x bonded with `order` to an atom of element elem (0 = any). */
static int count_bonded(const as_mol *m, int x, int order, int elem)
{
    int n = 0;
    const as_atom *a = &m->atoms[x];
    for (int i = 0; i < a->degree; i++) {
        const as_bond *b = &m->bonds[a->nbond[i]];
        if (b->aromatic || b->order != order)
            continue;
        if (elem == 0 || m->atoms[a->nbr[i]].elem == elem)
            n++;
    }
    return n;
}

static int count_elem(const as_mol *m, int x, int elem)
{
    int n = 0;
    for (int i = 0; i < m->atoms[x].degree; i++)
        if (m->atoms[m->atoms[x].nbr[i]].elem == elem)
            n++;
    return n;
}

/* What a neighbour x of a cationic or radical centre c is. */
enum { NB_ALKYL, NB_ARYL, NB_VINYL, NB_O, NB_N, NB_S, NB_F, NB_X, NB_CO, NB_CN, NB_CF, NB_NO2,
       NB_SO2, NB_OTHER };

static int classify_nbr(const as_mol *m, int c, int x, int sat)
{
    const as_atom *a = &m->atoms[x];
    switch (a->elem) {
    case 6: {
        if (a->aromatic)
            return NB_ARYL;
        /* one pass over x's bonds; the tests keep their order of precedence: C=O/C=S/C=N,
         * then C#N, then CF2/CF3, then a C=C or C#C away from c (not for the carbon sat) */
        int co = 0, cn = 0, nf = 0, vinyl = 0;
        for (int i = 0; i < a->degree; i++) {
            int y = a->nbr[i], ye = m->atoms[y].elem;
            const as_bond *b = &m->bonds[a->nbond[i]];
            nf += ye == 9;
            if (!b->aromatic && b->order == 2 && (ye == 8 || ye == 16 || ye == 7))
                co = 1;
            if (!b->aromatic && b->order == 3 && ye == 7)
                cn = 1;
            if (x != sat && y != c && ye == 6 &&
                ((b->order == 2 && !b->aromatic) || b->order == 3))
                vinyl = 1;
        }
        return co ? NB_CO : cn ? NB_CN : nf >= 2 ? NB_CF : vinyl ? NB_VINYL : NB_ALKYL;
    }
    case 7:
        if (count_elem(m, x, 8) >= 2)
            return NB_NO2;
        if (a->charge > 0 || a->aromatic)
            return NB_OTHER;
        return NB_N;
    case 8:
        return a->charge == 0 ? NB_O : NB_OTHER;
    case 16:
        if (count_bonded(m, x, 2, 8) >= 2)
            return NB_SO2;
        return a->charge == 0 ? NB_S : NB_OTHER;
    case 9:
        return NB_F;
    case 17:
    case 35:
    case 53:
        return NB_X;
    default:
        return NB_OTHER;
    }
}

/* 1 when sp3 carbon x carries a singly bonded oxygen (OH, OR, OC(=O)R). */
static int carries_oxygen(const as_mol *m, int x)
{
    for (int i = 0; i < m->atoms[x].degree; i++)
        if (m->atoms[m->atoms[x].nbr[i]].elem == 8 &&
            m->bonds[m->atoms[x].nbond[i]].order == AS_BOND_SINGLE)
            return 1;
    return 0;
}

/* 1 when sp3 carbon x carries Cl, Br or I. */
static int carries_heavy_halogen(const as_mol *m, int x)
{
    for (int i = 0; i < m->atoms[x].degree; i++) {
        int z = m->atoms[m->atoms[x].nbr[i]].elem;
        if (z == 17 || z == 35 || z == 53)
            return 1;
    }
    return 0;
}

/* ---------------------------------------------------------------- aryl substituents */

/* Finds an aromatic six-membered SSSR ring through x; writes its atoms in ring order
 * starting at x into ring[6]. Returns 1 when found. */
static int six_ring_from(const as_mol *m, int x, int ring[6])
{
    for (int r = 0; r < m->nrings; r++) {
        int s = m->ring_start[r], e = m->ring_start[r + 1];
        if (e - s != 6)
            continue;
        int pos = -1, arom = 1;
        for (int k = s; k < e; k++) {
            if (!m->atoms[m->ring_atoms[k]].aromatic)
                arom = 0;
            if (m->ring_atoms[k] == x)
                pos = k - s;
        }
        if (pos < 0 || !arom)
            continue;
        for (int k = 0; k < 6; k++)
            ring[k] = m->ring_atoms[s + (pos + k) % 6];
        return 1;
    }
    return 0;
}

static int in_list(const int *v, int n, int x)
{
    for (int i = 0; i < n; i++)
        if (v[i] == x)
            return 1;
    return 0;
}

/* Classifies a ring substituent atom y bonded to ring atom r; SUB_COUNT when not tabled. */
static int classify_ring_subst(const as_mol *m, int r, int y)
{
    const as_atom *a = &m->atoms[y];
    switch (a->elem) {
    case 8:
        if (a->charge != 0)
            return SUB_COUNT;
        return a->total_h > 0 ? SUB_OH : SUB_OR;
    case 7:
        if (count_elem(m, y, 8) >= 2)
            return SUB_NO2;
        if (a->aromatic || a->charge != 0)
            return SUB_COUNT;
        return a->total_h >= 2 ? SUB_NH2 : SUB_NR2;
    case 6:
        if (a->aromatic)
            return SUB_COUNT;
        if (count_bonded(m, y, 3, 7))
            return SUB_CN;
        if (count_bonded(m, y, 2, 8))
            return SUB_ACYL;
        if (count_elem(m, y, 9) >= 2)
            return SUB_CF3;
        (void)r;
        return SUB_ALKYL;
    case 9:
        return SUB_F;
    case 17:
        return SUB_CL;
    case 35:
        return SUB_BR;
    case 53:
        return SUB_I;
    default:
        return SUB_COUNT;
    }
}

/* Copies at most maxn bytes of src (up to its NUL) into dst of cap bytes, truncating like
 * snprintf("%.*s"); returns the bytes copied. */
static size_t copy_trunc(char *dst, size_t cap, const char *src, size_t maxn)
{
    size_t n = strnlen(src, maxn);
    if (cap == 0)
        return 0;
    if (n > cap - 1)
        n = cap - 1;
    memcpy(dst, src, n);
    dst[n] = '\0';
    return n;
}

/* Sums σ+ over the meta and para substituents of the aryl ring whose ipso atom is x,
 * writing a note like "p-OMe". Ortho substituents are not in the Brown–Okamoto scale and
 * are left out. */
static double aryl_sigma(const as_mol *m, int x, char *note, size_t cap)
{
    int ring[6];
    if (!six_ring_from(m, x, ring))
        return 0.0;
    double sum = 0.0;
    for (int k = 2; k <= 4; k++) {
        int r = ring[k];
        int para = (k == 3);
        for (int i = 0; i < m->atoms[r].degree; i++) {
            int y = m->atoms[r].nbr[i];
            if (in_list(ring, 6, y) || m->atoms[y].aromatic)
                continue;
            int s = classify_ring_subst(m, r, y);
            if (s == SUB_COUNT)
                continue;
            sum += para ? sigma_plus[s].para : sigma_plus[s].meta;
            size_t used = strlen(note);
            if (used + 12 < cap) {
                char item[64];
                size_t n = 0;
                if (used)
                    item[n++] = ',';
                item[n++] = para ? 'p' : 'm';
                item[n++] = '-';
                n += copy_trunc(item + n, sizeof item - n, sigma_plus[s].name, (size_t)-1);
                copy_trunc(note + used, cap - used, item, n);
            }
        }
    }
    return sum;
}

/* ---------------------------------------------------------------- scores */

double as_sites_cation_hia(const as_mol *m, int center, int ignore, int sat,
                           const char **kind)
{
    const as_atom *c = &m->atoms[center];
    int ncarb = 0, naryl = 0, nvinyl = 0, donor = 0;
    double corr = 0.0;
    for (int i = 0; i < c->degree; i++) {
        int x = c->nbr[i];
        if (x == ignore)
            continue;
        int t = classify_nbr(m, center, x, sat);
        switch (t) {
        case NB_ALKYL:
            ncarb++;
            if (carries_heavy_halogen(m, x))
                corr += HIA_BETA_X;
            else if (carries_oxygen(m, x))
                corr += HIA_BETA_O;
            break;
        case NB_ARYL: {
            char note[48] = "";
            ncarb++;
            corr += naryl == 0 ? HIA_ARYL : HIA_ARYL_2ND;
            corr += BO_KCAL_PER_SIGMA * aryl_sigma(m, x, note, sizeof note);
            naryl++;
            break;
        }
        case NB_VINYL:
            ncarb++;
            nvinyl++;
            corr += HIA_VINYL;
            break;
        case NB_CO:
            ncarb++;
            corr += HIA_ALPHA_CO;
            break;
        case NB_CN:
            ncarb++;
            corr += HIA_ALPHA_CN;
            break;
        case NB_CF:
            ncarb++;
            corr += HIA_ALPHA_CF;
            break;
        case NB_O:
            corr += HIA_ALPHA_O;
            donor = donor ? donor : 8;
            break;
        case NB_N:
            corr += HIA_ALPHA_N;
            donor = 7;
            break;
        case NB_S:
            corr += HIA_ALPHA_S;
            donor = donor ? donor : 16;
            break;
        case NB_F:
            corr += HIA_ALPHA_F;
            break;
        case NB_X:
            corr += HIA_ALPHA_X;
            break;
        case NB_NO2:
            corr += HIA_ALPHA_NO2;
            break;
        case NB_SO2:
            corr += HIA_ALPHA_SO2;
            break;
        default:
            break;
        }
    }
    if (ncarb > 3)
        ncarb = 3;
    if (kind) {
        static const char *const deg_names[4] = {"methyl", "primary", "secondary", "tertiary"};
        if (donor == 8)
            *kind = "oxocarbenium";
        else if (donor == 7)
            *kind = "iminium";
        else if (naryl)
            *kind = ncarb >= 3 ? "tertiary benzylic" : ncarb == 2 ? "secondary benzylic"
                                                                  : "benzylic";
        else if (nvinyl)
            *kind = ncarb >= 3 ? "tertiary allylic" : ncarb == 2 ? "secondary allylic"
                                                                 : "allylic";
        else
            *kind = deg_names[ncarb];
    }
    return hia_by_degree[ncarb] + corr;
}

double as_sites_radical_bde(const as_mol *m, int center, int ignore, int sat)
{
    const as_atom *c = &m->atoms[center];
    int ncarb = 0, naryl = 0, nvinyl = 0;
    double corr = 0.0;
    for (int i = 0; i < c->degree; i++) {
        int x = c->nbr[i];
        if (x == ignore)
            continue;
        switch (classify_nbr(m, center, x, sat)) {
        case NB_ALKYL:
            ncarb++;
            break;
        case NB_ARYL:
            ncarb++;
            if (!naryl++)
                corr += BDE_ARYL;
            break;
        case NB_VINYL:
            ncarb++;
            if (!nvinyl++)
                corr += BDE_VINYL;
            break;
        case NB_CO:
            ncarb++;
            corr += BDE_ALPHA_CO;
            break;
        case NB_CN:
            ncarb++;
            corr += BDE_ALPHA_CN;
            break;
        case NB_CF:
            ncarb++;
            corr += BDE_ALPHA_CF;
            break;
        case NB_O:
            corr += BDE_ALPHA_O;
            break;
        case NB_N:
            corr += BDE_ALPHA_N;
            break;
        case NB_S:
            corr += BDE_ALPHA_S;
            break;
        case NB_F:
        case NB_X:
            corr += BDE_ALPHA_X;
            break;
        default:
            break;
        }
    }
    if (ncarb > 3)
        ncarb = 3;
    return bde_by_degree[ncarb] + corr;
}

/* Steric demand at alkene carbon e (its substituents other than partner p). */
static double steric_at(const as_mol *m, int e, int p)
{
    double s = 0.0;
    const as_atom *a = &m->atoms[e];
    for (int i = 0; i < a->degree; i++) {
        int x = a->nbr[i];
        if (x == p || m->atoms[x].elem == 1)
            continue;
        switch (classify_nbr(m, e, x, -1)) {
        case NB_ALKYL: {
            int k = m->atoms[x].degree - 1;
            s += ST_ALKYL + (k > 1 ? ST_BRANCH * (k - 1) : 0.0);
            break;
        }
        case NB_ARYL:
            s += ST_ARYL;
            break;
        case NB_VINYL:
            s += ST_VINYL;
            break;
        case NB_F:
            s += ST_F;
            break;
        case NB_CO:
        case NB_CN:
        case NB_CF:
        case NB_NO2:
        case NB_SO2:
            s += ST_ACCEPTOR;
            break;
        default:
            s += ST_HETERO;
            break;
        }
    }
    return s;
}

/* ---------------------------------------------------------------- describing an end */

static void describe_end(const as_mol *m, int e, int p, as_site_end *out)
{
    memset(out, 0, sizeof *out);
    out->atom = e;
    out->vinyl_atom = -1;
    out->donor_atom = -1;
    out->acceptor_atom = -1;
    const as_atom *a = &m->atoms[e];
    out->n_h = a->total_h;
    for (int i = 0; i < a->degree; i++) {
        int x = a->nbr[i];
        if (x == p)
            continue;
        if (m->atoms[x].elem == 1) {
            out->n_h++;
            continue;
        }
        out->n_heavy++;
        switch (classify_nbr(m, e, x, -1)) {
        case NB_ALKYL:
            out->n_alkyl++;
            if (carries_heavy_halogen(m, x))
                out->allylic_halide = 1;
            break;
        case NB_ARYL: {
            size_t used = strlen(out->aryl_note);
            out->n_aryl++;
            out->sigma_plus += aryl_sigma(m, x, out->aryl_note + used,
                                          sizeof out->aryl_note - used);
            break;
        }
        case NB_VINYL:
            if (out->vinyl_atom < 0)
                out->vinyl_atom = x;
            break;
        case NB_O:
        case NB_N:
        case NB_S:
            if (out->donor_atom < 0) {
                out->donor_atom = x;
                out->donor_elem = m->atoms[x].elem;
            }
            break;
        case NB_F:
        case NB_X:
            if (!out->halogen)
                out->halogen = m->atoms[x].elem;
            break;
        case NB_CO:
        case NB_CN:
        case NB_CF:
        case NB_NO2:
        case NB_SO2:
            if (out->acceptor == AS_ACC_NONE) {
                int t = classify_nbr(m, e, x, -1);
                out->acceptor = t == NB_CO    ? AS_ACC_CARBONYL
                                : t == NB_CN  ? AS_ACC_NITRILE
                                : t == NB_CF  ? AS_ACC_PERFLUORO
                                : t == NB_NO2 ? AS_ACC_NITRO
                                              : AS_ACC_SULFONYL;
                out->acceptor_atom = x;
            }
            break;
        default:
            break;
        }
    }
    out->cation_hia = as_sites_cation_hia(m, e, -1, p, &out->cation_kind);
    out->radical_bde = as_sites_radical_bde(m, e, -1, p);
    out->steric = steric_at(m, e, p);
}

static as_geometry geometry_of(const as_mol *m, int bond, const as_site *s)
{
    if (s->end[0].n_heavy == 0 || s->end[1].n_heavy == 0 || s->end[0].n_h >= 2 ||
        s->end[1].n_h >= 2)
        return AS_GEOM_NONE;
    if (s->ring_size >= 3 && s->ring_size < 8)
        return AS_GEOM_RING;
    int d = as_mol_find_dbstereo(m, bond);
    if (d >= 0)
        return m->dbs[d].cis ? AS_GEOM_CIS : AS_GEOM_TRANS;
    return AS_GEOM_UNKNOWN;
}

static void classify_site(as_site *s)
{
    const as_site_end *a = &s->end[0], *b = &s->end[1];
    s->n_subst = a->n_heavy + b->n_heavy;
    const char *c;
    switch (s->n_subst) {
    case 0:
        c = "ethylene";
        break;
    case 1:
        c = "monosubstituted";
        break;
    case 2:
        if (a->n_heavy == 2 || b->n_heavy == 2)
            c = "1,1-disubstituted";
        else if (s->geometry == AS_GEOM_CIS || s->geometry == AS_GEOM_RING)
            c = "cis-1,2-disubstituted";
        else if (s->geometry == AS_GEOM_TRANS)
            c = "trans-1,2-disubstituted";
        else
            c = "1,2-disubstituted";
        break;
    case 3:
        c = "trisubstituted";
        break;
    default:
        c = "tetrasubstituted";
        break;
    }
    copy_trunc(s->cls, sizeof s->cls, c, (size_t)-1);
    if (s->n_subst == 1) {
        const as_site_end *sub = a->n_heavy ? a : b;
        if (sub->n_aryl == 1) {
            copy_trunc(s->cls, sizeof s->cls, "styrene", (size_t)-1);
            if (sub->aryl_note[0] && !strchr(sub->aryl_note, ',')) {
                s->cls[7] = ':';
                copy_trunc(s->cls + 8, sizeof s->cls - 8, sub->aryl_note, 39);
            }
        }
    }
}

/* ---------------------------------------------------------------- bridged rings */

/* The only ring neighbour of alkene carbon c besides its partner q, or -1 when there is none
 * or more than one. */
static int ring_partner(const as_mol *m, int c, int q)
{
    int found = -1;
    for (int i = 0; i < m->atoms[c].degree; i++) {
        int n = m->atoms[c].nbr[i];
        if (n == q || m->bonds[m->atoms[c].nbond[i]].ring_size == 0)
            continue;
        if (found >= 0)
            return -1;
        found = n;
    }
    return found;
}

/* Shortest path from a to b over ring bonds that avoids atoms marked in `block`. Writes the
 * atoms strictly between a and b into mid[] (in order from a) and returns how many, or -1
 * when there is no such path. prev and queue are scratch arrays of natoms ints. */
static int bridge_path(const as_mol *m, int a, int b, const unsigned char *block, int *prev,
                       int *queue, int *mid, int cap)
{
    for (int i = 0; i < m->natoms; i++)
        prev[i] = -2;
    int head = 0, tail = 0;
    queue[tail++] = a;
    prev[a] = -1;
    while (head < tail && prev[b] == -2) {
        int x = queue[head++];
        for (int i = 0; i < m->atoms[x].degree; i++) {
            int y = m->atoms[x].nbr[i];
            if (prev[y] != -2 || (block[y] && y != b) ||
                m->bonds[m->atoms[x].nbond[i]].ring_size == 0)
                continue;
            if (x == a && y == b)
                continue; /* a direct bond is not a bridge with atoms */
            prev[y] = x;
            queue[tail++] = y;
        }
    }
    if (prev[b] == -2)
        return -1;
    int n = 0;
    for (int x = prev[b]; x != a; x = prev[x])
        n++;
    if (n > cap)
        return -1;
    int k = n;
    for (int x = prev[b]; x != a; x = prev[x])
        mid[--k] = x;
    return n;
}

/* Largest bridge we describe; longer ones are reported as bridged without detail. */
#define MAX_BRIDGE 12

/* Fills the facial fields of site s: is its C=C the two-atom bridge between two bridgeheads,
 * and is the system a norbornene (bicyclo[2.2.1], one-carbon bridge CH2)? */
static as_status find_face(const as_mol *m, as_site *s, as_error *err)
{
    s->face = AS_FACE_NONE;
    for (int k = 0; k < 2; k++)
        s->bridgehead[k] = s->short_bridge[k] = s->long_bridge[k] = -1;
    s->bridge_len[0] = s->bridge_len[1] = 0;
    if (s->ring_size == 0)
        return AS_OK;
    int c1 = s->end[0].atom, c2 = s->end[1].atom;
    int p = ring_partner(m, c1, c2), q = ring_partner(m, c2, c1);
    if (p < 0 || q < 0 || p == q)
        return AS_OK;
    unsigned char *block = calloc((size_t)m->natoms, 1);
    int *prev = malloc((size_t)m->natoms * sizeof *prev);
    int *queue = malloc((size_t)m->natoms * sizeof *queue);
    if (!block || !prev || !queue) {
        free(block);
        free(prev);
        free(queue);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory finding C=C sites");
    }
    int mid1[MAX_BRIDGE], mid2[MAX_BRIDGE];
    block[c1] = block[c2] = 1;
    int n1 = bridge_path(m, p, q, block, prev, queue, mid1, MAX_BRIDGE);
    int n2 = -1;
    if (n1 >= 1) {
        for (int i = 0; i < n1; i++)
            block[mid1[i]] = 1;
        n2 = bridge_path(m, p, q, block, prev, queue, mid2, MAX_BRIDGE);
    }
    free(block);
    free(prev);
    free(queue);
    if (n1 < 1 || n2 < 1)
        return AS_OK; /* not a bridge between two bridgeheads */
    s->face = AS_FACE_UNCLEAR;
    s->bridgehead[0] = p;
    s->bridgehead[1] = q;
    s->short_bridge[0] = mid1[0];
    s->short_bridge[1] = mid1[n1 - 1];
    s->long_bridge[0] = mid2[0];
    s->long_bridge[1] = mid2[n2 - 1];
    s->bridge_len[0] = n1;
    s->bridge_len[1] = n2;
    /* Norbornene type: bicyclo[2.2.1] with the C=C in a two-carbon bridge and a CH2 as the
     * one-carbon bridge; both bridgeheads sp3 with at most one further substituent. */
    const as_atom *mb = &m->atoms[mid1[0]];
    if (n1 == 1 && n2 == 2 && mb->elem == 6 && mb->degree == 2 && mb->total_h == 2 &&
        m->atoms[p].degree + m->atoms[p].total_h == 4 &&
        m->atoms[q].degree + m->atoms[q].total_h == 4 && as_mol_bond_order_sum(m, p) ==
        m->atoms[p].degree && as_mol_bond_order_sum(m, q) == m->atoms[q].degree)
        s->face = AS_FACE_EXO;
    return AS_OK;
}

/* ---------------------------------------------------------------- public */

as_status as_sites_find(const as_mol *m, as_sites **out, as_error *err)
{
    *out = NULL;
    if (!m || !m->perceived)
        return as_error_set(err, AS_ERR_ARG, -1, -1,
                            "the molecule must be perceived before its C=C sites are found");
    as_sites *s = calloc(1, sizeof *s);
    if (!s)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory finding C=C sites");
    int cap = 0;
    for (int b = 0; b < m->nbonds; b++) {
        const as_bond *bd = &m->bonds[b];
        if (bd->order != 2 || bd->aromatic)
            continue;
        const as_atom *x = &m->atoms[bd->a], *y = &m->atoms[bd->b];
        if (x->elem != 6 || y->elem != 6 || x->aromatic || y->aromatic || x->charge ||
            y->charge)
            continue;
        /* An allene carbon (two double bonds) is not an alkene site we model. */
        if (count_bonded(m, bd->a, 2, 0) > 1 || count_bonded(m, bd->b, 2, 0) > 1)
            continue;
        if (s->n == cap) {
            int ncap = cap ? cap * 2 : 4;
            as_site *p = realloc(s->site, (size_t)ncap * sizeof *p);
            if (!p) {
                as_sites_free(s);
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory finding C=C sites");
            }
            s->site = p;
            cap = ncap;
        }
        as_site *st = &s->site[s->n++];
        memset(st, 0, sizeof *st);
        int lo = bd->a < bd->b ? bd->a : bd->b, hi = bd->a < bd->b ? bd->b : bd->a;
        st->bond = b;
        st->ring_size = bd->ring_size;
        describe_end(m, lo, hi, &st->end[0]);
        describe_end(m, hi, lo, &st->end[1]);
        st->geometry = geometry_of(m, b, st);
        st->conj_site = -1;
        st->acceptor_end = st->end[0].acceptor ? 0 : st->end[1].acceptor ? 1 : -1;
        classify_site(st);
        as_status fst = find_face(m, st, err);
        if (fst != AS_OK) {
            as_sites_free(s);
            return fst;
        }
    }
    /* Link conjugated pairs (diene units). */
    for (int i = 0; i < s->n; i++) {
        for (int k = 0; k < 2 && s->site[i].conj_site < 0; k++) {
            int v = s->site[i].end[k].vinyl_atom;
            if (v < 0)
                continue;
            for (int j = 0; j < s->n; j++)
                if (j != i && (s->site[j].end[0].atom == v || s->site[j].end[1].atom == v))
                    s->site[i].conj_site = j;
        }
    }
    *out = s;
    return AS_OK;
}

void as_sites_free(as_sites *s)
{
    if (!s)
        return;
    free(s->site);
    free(s);
}
