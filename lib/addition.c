/* addition.c — applying one rule variant to one C=C site: the candidate products.
 * Owns: placing groups, regiochemistry per regio mode, syn/anti stereo, 1,2-shifts,
 * conjugate and 1,4-addition, ozonolysis cleavage.
 * Must not: do I/O or edit its input.
 *
 * Design. Every product starts as a copy of the perceived substrate, so substrate atom
 * indices stay valid in all products (rationales name carbons by them); added groups are
 * appended. The product is perceived again, then stereo records for new centres are added.
 * The canonical ranking that decides which atoms are stereocentres is kept with the adduct
 * (as_adduct.ranking): the records do not change it, so the product's SMILES is written from
 * it later without ranking the molecule again.
 *
 * Relative configuration. The C=C is laid in the xy plane: C1 (takes `first`) at the
 * origin, C2 at +x, each carbon's two other substituents at ±y ("up"/"down"). Which
 * substituent of C2 is up follows from the geometry: a ring C=C (< 8 atoms) has its two ring
 * bonds cis; a '/' '\' record says whether its two reference atoms are cis. The first group
 * comes from +z; the second from +z (syn) or −z (anti). The parity of each new centre is
 * the sign of the signed volume of its four neighbour positions, which is how '@'/'@@' are
 * defined (looking from the first neighbour, the rest anticlockwise = '@'). */
#include "addsite/addition.h"
#include "addsite/canon.h"
#include "addsite/perceive.h"
#include "addsite/smiles.h"
#include "status_int.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- constants */

/* Tedder–Walton: radicals add preferentially at the less substituted carbon; steric
 * effects at the site of attack dominate the orientation (Tedder & Walton, Tetrahedron
 * 1980, 36, 701, from memory). We charge this many kcal/mol per heavy substituent on the
 * attacked carbon (estimate). */
#define RADICAL_ATTACK_KCAL 3.0

/* Borane: kcal/mol per methyl equivalent of steric demand at the boron end, for BH3
 * (bulk 1). BH3 on a monosubstituted alkene gives ~94:6 (Brown & Zweifel, J. Am. Chem. Soc.
 * 1960, 82, 4708, from memory): RT ln(94/6) = 1.63 kcal/mol at 25 °C for one methyl. */
#define BORANE_KCAL_PER_STERIC 1.6

/* A cation shifts only towards a clearly more stable one: at least this many kcal/mol of
 * hydride ion affinity gained (secondary → tertiary is 15 in the series of lib/sites.c;
 * our threshold, estimate). */
#define SHIFT_MIN_GAIN 10.0

/* HBr radical addition to 1-methylcyclohexene at -78 °C is anti and gives the cis bromide
 * (Goering, Abell & Aycock, J. Am. Chem. Soc. 1952, 74, 3588, from memory; reference not
 * verified); at higher temperature the carbon radical has no stereo control. We apply anti
 * addition to ring C=C (fewer than 8 atoms) at or below this temperature, °C. */
#define RADICAL_ANTI_MAX_C (-70.0)

/* ---------------------------------------------------------------- small helpers */

const char *as_stereo_name(as_stereo s)
{
    switch (s) {
    case AS_STEREO_RACEMIC:
        return "racemic";
    case AS_STEREO_MESO:
        return "meso";
    case AS_STEREO_SINGLE:
        return "single";
    case AS_STEREO_DIASTEREOMERS:
        return "diastereomers";
    default:
        return "none";
    }
}

void as_addition_opts_init(as_addition_opts *o)
{
    o->allow_shifts = 1;
    o->allow_conjugate = 1;
    o->tie_kcal_x100 = 50;
    o->temp_c = NAN;
}

void as_adduct_clear(as_adduct *a)
{
    if (!a)
        return;
    as_mol_free(a->mol);
    as_canon_ranking_free(a->ranking);
    memset(a, 0, sizeof *a);
}

void as_adducts_free(as_adducts *l)
{
    if (!l)
        return;
    for (int i = 0; i < l->n; i++)
        as_adduct_clear(&l->v[i]);
    free(l->v);
    free(l);
}

static void adduct_init(as_adduct *a, int site)
{
    memset(a, 0, sizeof *a);
    a->site = site;
    a->first_atom = a->second_atom = -1;
    a->first_group = a->second_group = -1;
    a->cation_atom = a->shift_to = a->migrant = -1;
}

static as_status list_push(as_adducts *l, as_adduct *a, as_error *err)
{
    if (l->n == l->cap) {
        int ncap = l->cap ? l->cap * 2 : 4;
        as_adduct *p = realloc(l->v, (size_t)ncap * sizeof *p);
        if (!p) {
            as_adduct_clear(a);
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory listing products");
        }
        l->v = p;
        l->cap = ncap;
    }
    l->v[l->n++] = *a;
    memset(a, 0, sizeof *a);
    return AS_OK;
}

/* ---------------------------------------------------------------- groups */

typedef struct group {
    as_mol *frag;   /* parsed fragment, NULL when absent or H */
    int present;
    int is_h;
} group;

static void group_free(group *g)
{
    as_mol_free(g->frag);
    memset(g, 0, sizeof *g);
}

static as_status group_read(const as_rule *r, const char *what, const char *smi, group *g,
                            as_error *err)
{
    memset(g, 0, sizeof *g);
    if (!smi || !*smi)
        return AS_OK;
    as_error e2;
    as_error_clear(&e2);
    as_status st = as_smiles_read(smi, strlen(smi), NULL, &g->frag, &e2);
    if (st != AS_OK)
        return as_error_set(err, AS_ERR_RULE, -1, -1,
                            "rule %s: group %s \"%s\" is not readable SMILES (%s)", r->id, what,
                            smi, e2.msg);
    if (g->frag->natoms == 0) {
        group_free(g);
        return as_error_set(err, AS_ERR_RULE, -1, -1, "rule %s: group %s is empty", r->id,
                            what);
    }
    g->present = 1;
    if (g->frag->natoms == 1 && g->frag->atoms[0].elem == 1 && g->frag->atoms[0].charge == 0 &&
        g->frag->atoms[0].isotope < 0) { /* [2H] stays an atom */
        g->is_h = 1;
        as_mol_free(g->frag);
        g->frag = NULL;
    }
    return AS_OK;
}

/* Adds one hydrogen to carbon c (bracket atoms keep an explicit count). */
static void add_h(as_mol *p, int c, int delta)
{
    if (p->atoms[c].hcount >= 0)
        p->atoms[c].hcount += delta;
}

/* Bonds group g to carbon c of p. Returns the index of the group's first atom, -1 when the
 * group is H or absent, -2 when out of memory. */
static int attach(as_mol *p, int c, const group *g)
{
    if (!g->present)
        return -1;
    if (g->is_h) {
        add_h(p, c, +1);
        return -1;
    }
    int off = as_mol_append(p, g->frag);
    if (off < 0 || as_mol_add_bond(p, c, off, AS_BOND_SINGLE) < 0)
        return -2;
    return off;
}

/* Perceives a product built from a perceived copy. The copy holds Kekulé orders, so the
 * aromatic flags are cleared first (the hydrogen pass counts one aromatic π bond for atoms
 * still flagged aromatic); the aromaticity pass sets them again. */
static as_status perceive_product(as_mol *p, const as_rule *r, as_error *err)
{
    for (int i = 0; i < p->natoms; i++)
        p->atoms[i].aromatic = 0;
    for (int i = 0; i < p->nbonds; i++)
        p->bonds[i].aromatic = 0;
    as_error e2;
    as_error_clear(&e2);
    unsigned failed = 0;
    as_status st = as_perceive(p, AS_PASS_ALL, &failed, &e2);
    if (st != AS_OK)
        return as_error_set(err, st, -1, e2.atom,
                            "the product of rule %s could not be perceived: %s", r->id, e2.msg);
    return AS_OK;
}

/* ---------------------------------------------------------------- stereo */

typedef struct v3 {
    double x, y, z;
} v3;

static double orient(v3 p0, v3 p1, v3 p2, v3 p3)
{
    v3 a = {p1.x - p0.x, p1.y - p0.y, p1.z - p0.z};
    v3 b = {p2.x - p0.x, p2.y - p0.y, p2.z - p0.z};
    v3 c = {p3.x - p0.x, p3.y - p0.y, p3.z - p0.z};
    return a.x * (b.y * c.z - b.z * c.y) - a.y * (b.x * c.z - b.z * c.x) +
           a.z * (b.x * c.y - b.y * c.x);
}

/* The two substituent slots of alkene carbon c besides partner q in the substrate: heavy
 * (or explicit H) neighbours first, then AS_IMPLICIT_H for an implicit hydrogen. Returns how
 * many slots were filled (2 normally; fewer when c carries two implicit H). */
static int slots_of(const as_mol *m, int c, int q, int slot[2])
{
    int n = 0;
    for (int i = 0; i < m->atoms[c].degree && n < 2; i++)
        if (m->atoms[c].nbr[i] != q)
            slot[n++] = m->atoms[c].nbr[i];
    int h = m->atoms[c].total_h;
    if (n < 2 && h == 1)
        slot[n++] = AS_IMPLICIT_H;
    return h >= 2 ? 0 : n;
}

/* Ring neighbour of c (not q) in a ring of m that holds the bond c–q, or -1. */
static int ring_nbr(const as_mol *m, int c, int q)
{
    for (int r = 0; r < m->nrings; r++) {
        int s = m->ring_start[r], e = m->ring_start[r + 1], n = e - s;
        for (int k = 0; k < n; k++) {
            if (m->ring_atoms[s + k] != c)
                continue;
            int prev = m->ring_atoms[s + (k + n - 1) % n], next = m->ring_atoms[s + (k + 1) % n];
            if (next == q)
                return prev;
            if (prev == q)
                return next;
        }
    }
    return -1;
}

/* Decides up/down slots of c1 and c2 from the site geometry. up1/dn1/up2/dn2 receive atom
 * indices or AS_IMPLICIT_H. Returns 1 when the geometry is known. */
static int layout(const as_mol *sub, const as_site *s, int c1, int c2, int *up1, int *dn1,
                  int *up2, int *dn2)
{
    int sl1[2], sl2[2];
    if (slots_of(sub, c1, c2, sl1) != 2 || slots_of(sub, c2, c1, sl2) != 2)
        return 0;
    int ref1 = -1, ref2 = -1, cis = 1;
    if (s->geometry == AS_GEOM_RING) {
        ref1 = ring_nbr(sub, c1, c2);
        ref2 = ring_nbr(sub, c2, c1);
    } else if (s->geometry == AS_GEOM_CIS || s->geometry == AS_GEOM_TRANS) {
        int d = as_mol_find_dbstereo(sub, s->bond);
        if (d < 0)
            return 0;
        const as_bond *b = &sub->bonds[s->bond];
        ref1 = b->a == c1 ? sub->dbs[d].ref_a : sub->dbs[d].ref_b;
        ref2 = b->a == c1 ? sub->dbs[d].ref_b : sub->dbs[d].ref_a;
        cis = sub->dbs[d].cis;
    } else {
        return 0;
    }
    if (ref1 < 0 || ref2 < 0)
        return 0;
    int i1 = sl1[0] == ref1 ? 0 : sl1[1] == ref1 ? 1 : -1;
    int i2 = sl2[0] == ref2 ? 0 : sl2[1] == ref2 ? 1 : -1;
    if (i1 < 0 || i2 < 0)
        return 0;
    *up1 = sl1[i1];
    *dn1 = sl1[1 - i1];
    *up2 = cis ? sl2[i2] : sl2[1 - i2];
    *dn2 = cis ? sl2[1 - i2] : sl2[i2];
    return 1;
}

/* 1 when atom c of perceived p is a tetrahedral stereocentre by graph symmetry classes. */
static int is_centre(const as_mol *p, const int *cls, int c)
{
    const as_atom *a = &p->atoms[c];
    if (a->elem != 6 || a->aromatic || a->total_h > 1 || a->degree + a->total_h != 4)
        return 0;
    for (int i = 0; i < a->degree; i++) {
        if (p->bonds[a->nbond[i]].order != 1)
            return 0;
        for (int k = i + 1; k < a->degree; k++)
            if (cls[a->nbr[i]] == cls[a->nbr[k]])
                return 0;
    }
    return 1;
}

/* 1 when ring atom c (in ring r of p, ring order) is a cis/trans site without being a
 * stereocentre: an sp3 carbon whose two neighbours in the ring are alike (same class) and
 * whose two other substituents (H counted) differ — C4 of a 4-substituted cyclohexanol. */
static int ring_cis_trans_site(const as_mol *p, const int *cls, int c, int r)
{
    const as_atom *a = &p->atoms[c];
    if (a->elem != 6 || a->aromatic || a->total_h > 1 || a->degree + a->total_h != 4)
        return 0;
    int s = p->ring_start[r], e = p->ring_start[r + 1], len = e - s, at = -1;
    for (int i = s; i < e; i++)
        if (p->ring_atoms[i] == c)
            at = i - s;
    if (at < 0 || len < 4)
        return 0;
    int prev = p->ring_atoms[s + (at + len - 1) % len], next = p->ring_atoms[s + (at + 1) % len];
    if (cls[prev] != cls[next])
        return 0;
    int other[2], no = 0;
    for (int i = 0; i < a->degree; i++) {
        if (p->bonds[a->nbond[i]].order != 1)
            return 0;
        int b = a->nbr[i];
        if (b != prev && b != next && no < 2)
            other[no++] = b;
    }
    if (a->total_h == 1)
        return no == 1;
    return no == 2 && cls[other[0]] != cls[other[1]];
}

/* 1 when one of the atoms cand[0..n-1] is a ring cis/trans site and another atom of the same
 * ring is one too, so the product is a pair of cis/trans isomers. */
static int ring_cis_trans(const as_mol *p, const int *cls, const int *cand, int n)
{
    for (int r = 0; r < p->nrings; r++)
        for (int i = 0; i < n; i++) {
            if (cand[i] < 0 || !ring_cis_trans_site(p, cls, cand[i], r))
                continue;
            for (int k = p->ring_start[r]; k < p->ring_start[r + 1]; k++) {
                int b = p->ring_atoms[k];
                if (b != cand[i] && ring_cis_trans_site(p, cls, b, r))
                    return 1;
            }
        }
    return 0;
}

/* 1 when p equals its mirror image (canonical SMILES with all parities inverted). r: p's
 * kept ranking or NULL (the mirror image has the same graph). */
static as_status is_achiral(const as_mol *p, const as_canon_ranking *r, int *achiral,
                            as_error *err)
{
    *achiral = 0;
    as_mol *q = as_mol_copy(p);
    if (!q)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    for (int i = 0; i < q->ntetra; i++)
        q->tetra[i].parity = q->tetra[i].parity == AS_CCW ? AS_CW : AS_CCW;
    char *a = NULL, *b = NULL;
    as_status st = as_canon_smiles_ranked(p, NULL, r, &a, err);
    if (st == AS_OK)
        st = as_canon_smiles_ranked(q, NULL, r, &b, err);
    if (st == AS_OK)
        *achiral = strcmp(a, b) == 0;
    free(a);
    free(b);
    as_mol_free(q);
    return st;
}

/* Symmetry classes of the adduct's product (a new array in *cls, caller frees), keeping the
 * ranking they came from in ad->ranking for writing the product later. */
static as_status take_classes(as_adduct *ad, int **cls, as_error *err)
{
    *cls = malloc((size_t)ad->mol->natoms * sizeof(int));
    if (!*cls)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    as_canon_ranking_free(ad->ranking);
    ad->ranking = NULL;
    as_status st = as_canon_classes_keep(ad->mol, *cls, &ad->ranking, err);
    if (st != AS_OK) {
        free(*cls);
        *cls = NULL;
    }
    return st;
}

/* Counts the new stereocentres among cand[0..n-1] of perceived product p and sets the stereo
 * label; when `place` is set (controlled syn/anti with known geometry) the caller has
 * already computed records in rec[] for c1/c2 which are added when kept. */
static as_status finish_stereo(as_adduct *ad, const as_mol *sub, const int *cand, int n,
                               const as_tetra *rec, int nrec, as_error *err)
{
    as_mol *p = ad->mol;
    int *cls = NULL;
    as_status st = take_classes(ad, &cls, err);
    if (st != AS_OK)
        return st;
    int k = 0, centre[4] = {-1, -1, -1, -1};
    for (int i = 0; i < n; i++) {
        if (cand[i] < 0 || as_mol_find_tetra(p, cand[i]) >= 0)
            continue;
        int dup = 0;
        for (int j = 0; j < k; j++)
            dup |= centre[j] == cand[i];
        if (!dup && is_centre(p, cls, cand[i]) && k < 4)
            centre[k++] = cand[i];
    }
    /* Substrate records on atoms that are no longer stereocentres are dropped. */
    for (int i = p->ntetra - 1; i >= 0; i--)
        if (p->atoms[p->tetra[i].center].elem == 6 && !is_centre(p, cls, p->tetra[i].center))
            p->tetra[i] = p->tetra[--p->ntetra];
    /* Other stereocentres of the product (kept from the substrate, marked or not): the new
     * centres' configuration relative to them is not controlled by syn/anti addition. */
    int other = 0;
    for (int i = 0; i < p->natoms && !other; i++) {
        int mine = 0;
        for (int j = 0; j < k; j++)
            mine |= centre[j] == i;
        for (int j = 0; j < n; j++)
            mine |= cand[j] == i;
        if (!mine && (as_mol_find_tetra(p, i) >= 0 || is_centre(p, cls, i)))
            other = 1;
    }
    ad->cis_trans = k == 0 && p->ntetra == 0 && ring_cis_trans(p, cls, cand, n);
    free(cls);
    int chiral_sub = sub->ntetra > 0 || other;
    ad->new_centres = k;
    if (k == 0) {
        ad->stereo = p->ntetra > 0   ? AS_STEREO_SINGLE
                     : ad->cis_trans ? AS_STEREO_DIASTEREOMERS
                                     : AS_STEREO_NONE;
        return AS_OK;
    }
    if (k == 1 || chiral_sub || nrec == 0) {
        ad->stereo = (k == 1 && !chiral_sub) ? AS_STEREO_RACEMIC : AS_STEREO_DIASTEREOMERS;
        return AS_OK;
    }
    /* Two new centres with a controlled relative configuration. */
    int placed = 0;
    for (int i = 0; i < nrec; i++) {
        for (int j = 0; j < k; j++) {
            if (rec[i].center == centre[j]) {
                if (as_mol_add_tetra(p, &rec[i]) < 0)
                    return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
                placed++;
            }
        }
    }
    if (placed < k) {
        ad->stereo = AS_STEREO_DIASTEREOMERS;
        return AS_OK;
    }
    ad->marked = 1;
    int achiral = 0;
    st = is_achiral(p, ad->ranking, &achiral, err);
    if (st != AS_OK)
        return st;
    ad->meso = achiral;
    ad->stereo = achiral ? AS_STEREO_MESO : AS_STEREO_RACEMIC;
    return AS_OK;
}

/* Computes the tetra records of c1 and c2 for groups X (on c1, from +z) and Y (on c2, from
 * +z when syn, −z when anti). Returns how many records (0 when geometry is unknown). */
static int stereo_records(const as_mol *sub, const as_site *s, int c1, int c2, int x, int y,
                          as_addmode mode, as_tetra rec[2])
{
    int up1, dn1, up2, dn2;
    if (mode == AS_ADD_NONE || !layout(sub, s, c1, c2, &up1, &dn1, &up2, &dn2))
        return 0;
    const v3 p1 = {0, 0, 0}, p2 = {1, 0, 0};
    const v3 u1 = {-0.5, 0.87, 0}, d1 = {-0.5, -0.87, 0};
    const v3 u2 = {1.5, 0.87, 0}, d2 = {1.5, -0.87, 0};
    const v3 px = {0, 0, 1};
    const v3 py = {1, 0, mode == AS_ADD_SYN ? 1.0 : -1.0};
    int n = 0;
    /* A slot holding an implicit H and an added H on the same carbon: not a centre. */
    if (!(x == AS_IMPLICIT_H && (up1 == AS_IMPLICIT_H || dn1 == AS_IMPLICIT_H))) {
        int nb[4] = {c2, up1, dn1, x};
        v3 pos[4] = {p2, u1, d1, px};
        rec[n].center = c1;
        memcpy(rec[n].nbr, nb, sizeof nb);
        rec[n].parity = orient(pos[0], pos[1], pos[2], pos[3]) < 0 ? AS_CCW : AS_CW;
        n++;
    }
    if (!(y == AS_IMPLICIT_H && (up2 == AS_IMPLICIT_H || dn2 == AS_IMPLICIT_H))) {
        int nb[4] = {c1, up2, dn2, y};
        v3 pos[4] = {p1, u2, d2, py};
        rec[n].center = c2;
        memcpy(rec[n].nbr, nb, sizeof nb);
        rec[n].parity = orient(pos[0], pos[1], pos[2], pos[3]) < 0 ? AS_CCW : AS_CW;
        n++;
    }
    return n;
}

/* ---------------------------------------------------------------- facial control */

/* Exo attack on a norbornene-type C=C (site face AS_FACE_EXO, rule facial "exo").
 *
 * The model extends the xy-plane picture above: the bridgeheads P (on C1) and Q (on C2) lie
 * in the plane of the C=C, as in the real molecule (C1-C2=C3-C4 of norbornene is nearly
 * planar); the one-carbon bridge M sits above the middle (+z), the first atoms of the
 * two-carbon bridge below (-z), and each bridgehead's fourth substituent points outwards
 * in the plane. The exo face is the face syn to M, so every group arrives from +z. Only the
 * signs of the signed volumes matter, so rough positions suffice. The check against a
 * 3-D embedding (RDKit ETKDG) is tests/check_stereo_cip.py. */
static const v3 FX_M = {0.5, 1.6, 0.9};
static const v3 FX_LONG[2] = {{-0.4, 1.9, -0.9}, {1.4, 1.9, -0.9}};
static const v3 FX_OUT[2] = {{-1.5, 0.37, 0.0}, {2.5, 0.37, 0.0}};
static const v3 FX_HEAD[2] = {{-0.5, 0.87, 0.0}, {1.5, 0.87, 0.0}};

/* 1 when the rule's exo preference applies to site s. */
static int exo_applies(const as_site *s, const as_rule *r)
{
    return s->face == AS_FACE_EXO && r->facial && strcmp(r->facial, "exo") == 0 &&
           r->regio != AS_REGIO_CLEAVE;
}

/* Parity of record t re-expressed for the neighbour order `order` (a permutation of
 * t->nbr), or 0 when the two lists do not hold the same neighbours. */
static int parity_for_order(const as_tetra *t, const int order[4])
{
    int idx[4];
    for (int i = 0; i < 4; i++) {
        idx[i] = -1;
        for (int j = 0; j < 4; j++)
            if (t->nbr[j] == order[i])
                idx[i] = j;
        if (idx[i] < 0)
            return 0;
    }
    int swaps = 0;
    for (int i = 0; i < 4; i++)
        for (int j = i + 1; j < 4; j++)
            if (idx[i] > idx[j])
                swaps++;
    if (swaps % 2 == 0)
        return t->parity;
    return t->parity == AS_CCW ? AS_CW : AS_CCW;
}

/* The neighbour of bridgehead h that is none of a, b, c (or AS_IMPLICIT_H). */
static int fourth_nbr(const as_mol *m, int h, int a, int b, int c)
{
    for (int i = 0; i < m->atoms[h].degree; i++) {
        int n = m->atoms[h].nbr[i];
        if (n != a && n != b && n != c)
            return n;
    }
    return AS_IMPLICIT_H;
}

static void record_at(as_tetra *t, int centre, const int nb[4], const v3 pos[4])
{
    t->center = centre;
    memcpy(t->nbr, nb, 4 * sizeof nb[0]);
    t->parity = orient(pos[0], pos[1], pos[2], pos[3]) < 0 ? AS_CCW : AS_CW;
}

/* Records for C1, C2 (groups x, y from the exo face) and for both bridgeheads, written into
 * rec[]; returns how many. *anchor receives 1 when the substrate already fixed a bridgehead
 * configuration (the model was mirrored to match it where needed), 0 when it did not, -1
 * when a substrate record could not be related to the model. */
static int exo_records(const as_mol *sub, const as_site *s, int c1, int x, int y,
                       as_tetra rec[4], int *anchor)
{
    /* The frame is fixed by the site (end[0] at the origin, end[1] at +x) whichever end
     * takes `first`: both orientations of one substrate must share one embedding, or the
     * two would be drawn in mirror-image frames. */
    int c[2] = {s->end[0].atom, s->end[1].atom};
    int grp[2] = {c[0] == c1 ? x : y, c[0] == c1 ? y : x};
    const v3 pc[2] = {{0, 0, 0}, {1, 0, 0}};
    const v3 pdown[2] = {{-0.5, -0.87, 0}, {1.5, -0.87, 0}};
    const v3 pgrp[2] = {{0, 0, 1}, {1, 0, 1}};
    int n = 0;
    for (int e = 0; e < 2; e++) {
        int sl[2];
        if (slots_of(sub, c[e], c[1 - e], sl) != 2)
            continue;
        int other = sl[0] == s->bridgehead[e] ? sl[1] : sl[0];
        if (grp[e] == AS_IMPLICIT_H && other == AS_IMPLICIT_H)
            continue; /* CH2: not a centre */
        int nb[4] = {c[1 - e], s->bridgehead[e], other, grp[e]};
        v3 pos[4] = {pc[1 - e], FX_HEAD[e], pdown[e], pgrp[e]};
        record_at(&rec[n++], c[e], nb, pos);
    }
    *anchor = 0;
    int mirror = 0;
    for (int e = 0; e < 2; e++) {
        int h = s->bridgehead[e];
        int nb[4] = {c[e], s->short_bridge[e], s->long_bridge[e],
                     fourth_nbr(sub, h, c[e], s->short_bridge[e], s->long_bridge[e])};
        v3 pos[4] = {pc[e], FX_M, FX_LONG[e], FX_OUT[e]};
        as_tetra t;
        record_at(&t, h, nb, pos);
        int d = as_mol_find_tetra(sub, h);
        if (d >= 0) {
            int theirs = parity_for_order(&sub->tetra[d], nb);
            if (!theirs) {
                *anchor = -1;
            } else if (*anchor == 0) {
                *anchor = 1;
                mirror = theirs != t.parity;
            }
        }
        rec[n++] = t;
    }
    if (mirror)
        for (int i = 0; i < n; i++)
            rec[i].parity = rec[i].parity == AS_CCW ? AS_CW : AS_CCW;
    return n;
}

/* Stereo of an exo adduct: places the records of rec[] on every atom of cand[] that is a
 * stereocentre of the product without a record, and labels the product. */
static as_status finish_exo(as_adduct *ad, const as_mol *sub, const int cand[4],
                            const as_tetra *rec, int nrec, int anchor, as_error *err)
{
    as_mol *p = ad->mol;
    int *cls = NULL;
    as_status st = take_classes(ad, &cls, err);
    if (st != AS_OK)
        return st;
    for (int i = p->ntetra - 1; i >= 0; i--)
        if (p->atoms[p->tetra[i].center].elem == 6 && !is_centre(p, cls, p->tetra[i].center))
            p->tetra[i] = p->tetra[--p->ntetra];
    int k = 0, other = 0;
    for (int i = 0; i < 4; i++) {
        if (cand[i] < 0 || !is_centre(p, cls, cand[i]) || as_mol_find_tetra(p, cand[i]) >= 0)
            continue;
        for (int j = 0; j < nrec; j++) {
            if (rec[j].center != cand[i])
                continue;
            if (as_mol_add_tetra(p, &rec[j]) < 0) {
                free(cls);
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            }
            k++;
        }
    }
    for (int i = 0; i < p->natoms && !other; i++) {
        int mine = 0;
        for (int j = 0; j < 4; j++)
            mine |= cand[j] == i;
        if (!mine && (as_mol_find_tetra(p, i) >= 0 || is_centre(p, cls, i)))
            other = 1;
    }
    free(cls);
    ad->new_centres = k;
    ad->exo = 1;
    if (k == 0) {
        ad->stereo = p->ntetra > 0 ? AS_STEREO_SINGLE : AS_STEREO_NONE;
        return AS_OK;
    }
    ad->marked = 1;
    if (other || anchor < 0) {
        ad->stereo = AS_STEREO_DIASTEREOMERS;
        return AS_OK;
    }
    if (anchor > 0 || sub->ntetra > 0) {
        ad->stereo = AS_STEREO_SINGLE;
        return AS_OK;
    }
    int achiral = 0;
    st = is_achiral(p, ad->ranking, &achiral, err);
    if (st != AS_OK)
        return st;
    ad->meso = achiral;
    ad->stereo = achiral ? AS_STEREO_MESO : AS_STEREO_RACEMIC;
    return AS_OK;
}

/* ---------------------------------------------------------------- placing */

static as_status cleave(as_mol *p, const as_site *s, const as_rule_variant *v, as_error *err)
{
    if (as_mol_remove_bond(p, s->bond) != AS_OK)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "bad site bond");
    int oxidative = v->workup && strcmp(v->workup, "oxidative") == 0;
    for (int k = 0; k < 2; k++) {
        int c = s->end[k].atom;
        int o = as_mol_add_atom(p, 8);
        if (o < 0 || as_mol_add_bond(p, c, o, AS_BOND_DOUBLE) < 0)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        if (oxidative && s->end[k].n_h >= 1) { /* aldehyde → carboxylic acid */
            int oh = as_mol_add_atom(p, 8);
            if (oh < 0 || as_mol_add_bond(p, c, oh, AS_BOND_SINGLE) < 0)
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            add_h(p, c, -1);
        } else {
            add_h(p, c, -1);
        }
    }
    return AS_OK;
}

typedef struct groups {
    group first, second, bridge;
} groups;

static void groups_free(groups *g)
{
    group_free(&g->first);
    group_free(&g->second);
    group_free(&g->bridge);
}

static as_status groups_read(const as_rule *r, const as_rule_variant *v, groups *g,
                             as_error *err)
{
    memset(g, 0, sizeof *g);
    as_status st = group_read(r, "first", v->first, &g->first, err);
    if (st == AS_OK)
        st = group_read(r, "second", v->second, &g->second, err);
    if (st == AS_OK)
        st = group_read(r, "bridge", v->bridge, &g->bridge, err);
    if (st != AS_OK)
        groups_free(g);
    return st;
}

/* The direct 1,2-product with groups already read. */
static as_status place(const as_mol *sub, const as_sites *sites, int site, int first_end,
                       const as_rule *rule, const as_rule_variant *v, const groups *g,
                       as_addmode mode, as_adduct *out, as_error *err)
{
    const as_site *s = &sites->site[site];
    adduct_init(out, site);
    int c1 = s->end[first_end].atom, c2 = s->end[1 - first_end].atom;
    out->first_atom = c1;
    out->second_atom = c2;
    out->path = rule->regio == AS_REGIO_CLEAVE ? AS_PATH_CLEAVE : AS_PATH_DIRECT;
    as_mol *p = as_mol_copy(sub);
    if (!p)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    out->mol = p;
    as_status st;
    if (rule->regio == AS_REGIO_CLEAVE) {
        st = cleave(p, s, v, err);
        if (st == AS_OK)
            st = perceive_product(p, rule, err);
        if (st == AS_OK) {
            int none[1] = {-1};
            st = finish_stereo(out, sub, none, 0, NULL, 0, err);
        }
        return st;
    }
    as_mol_set_bond_order(p, s->bond, AS_BOND_SINGLE);
    int x, y;
    if (g->bridge.present && !g->bridge.is_h) {
        int off = as_mol_append(p, g->bridge.frag);
        if (off < 0 || as_mol_add_bond(p, c1, off, 1) < 0 || as_mol_add_bond(p, c2, off, 1) < 0)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
        x = y = off;
        out->first_group = out->second_group = off;
    } else {
        const group *gs = g->second.present ? &g->second : &g->first;
        if (rule->regio != AS_REGIO_NONE)
            gs = &g->second;
        x = attach(p, c1, &g->first);
        y = attach(p, c2, gs);
        if (x == -2 || y == -2)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
        out->first_group = x;
        out->second_group = y;
        if (x < 0)
            x = AS_IMPLICIT_H;
        if (y < 0)
            y = AS_IMPLICIT_H;
    }
    st = perceive_product(p, rule, err);
    if (st != AS_OK)
        return st;
    if (exo_applies(s, rule)) {
        as_tetra xrec[4];
        int anchor = 0;
        int nx = exo_records(sub, s, c1, x, y, xrec, &anchor);
        int xcand[4] = {c1, c2, s->bridgehead[0], s->bridgehead[1]};
        return finish_exo(out, sub, xcand, xrec, nx, anchor, err);
    }
    as_tetra rec[2];
    int nrec = stereo_records(sub, s, c1, c2, x, y, mode, rec);
    int cand[2] = {c1, c2};
    return finish_stereo(out, sub, cand, 2, rec, nrec, err);
}

as_status as_addition_place(const as_mol *sub, const as_sites *sites, int site, int first_end,
                            const as_rule *rule, const as_rule_variant *variant,
                            as_addmode mode, as_adduct *out, as_error *err)
{
    if (!sub || !sites || !rule || !variant || !out || site < 0 || site >= sites->n ||
        first_end < 0 || first_end > 1)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "bad arguments to as_addition_place");
    groups g;
    as_status st = groups_read(rule, variant, &g, err);
    if (st != AS_OK)
        return st;
    st = place(sub, sites, site, first_end, rule, variant, &g, mode, out, err);
    groups_free(&g);
    if (st != AS_OK)
        as_adduct_clear(out);
    return st;
}

/* ---------------------------------------------------------------- shifts */

/* Best 1,2-shift for the cation on carbon e (partner q took the electrophile) at site s:
 * sets *to (the carbon the cation moves to), *migrant (-1 for H) and returns the HIA gained,
 * or 0. A bridgehead of the bridged ring system around the site is never a target: the cation
 * cannot become planar there (1-norbornyl and 1-bicyclo[2.2.2]octyl cations form only with
 * great difficulty; Bartlett & Knox, J. Am. Chem. Soc. 1939, 61, 3184, from memory). */
static double best_shift(const as_mol *m, const as_site *s, int e, int q, int *to,
                         int *migrant)
{
    double here = as_sites_cation_hia(m, e, -1, q, NULL);
    double best = 0.0;
    *to = *migrant = -1;
    const as_atom *a = &m->atoms[e];
    for (int i = 0; i < a->degree; i++) {
        int n = a->nbr[i];
        const as_atom *na = &m->atoms[n];
        if (n == q || na->elem != 6 || na->aromatic || as_mol_bond_order_sum(m, n) != na->degree)
            continue;
        if (s->face != AS_FACE_NONE && (n == s->bridgehead[0] || n == s->bridgehead[1]))
            continue;
        /* 1,2-hydride shift */
        if (na->total_h > 0) {
            double there = as_sites_cation_hia(m, n, -1, e, NULL);
            if (here - there >= SHIFT_MIN_GAIN && here - there > best) {
                best = here - there;
                *to = n;
                *migrant = -1;
            }
            continue; /* with an H present, H migrates in preference to alkyl */
        }
        /* 1,2-alkyl shift: an acyclic sp3 carbon substituent of n moves to e. */
        for (int k = 0; k < na->degree; k++) {
            int g = na->nbr[k];
            const as_atom *ga = &m->atoms[g];
            int b = na->nbond[k];
            if (g == e || ga->elem != 6 || ga->aromatic || m->bonds[b].ring_size ||
                as_mol_bond_order_sum(m, g) != ga->degree)
                continue;
            double there = as_sites_cation_hia(m, n, g, e, NULL);
            if (here - there >= SHIFT_MIN_GAIN && here - there > best) {
                best = here - there;
                *to = n;
                *migrant = g;
            }
        }
    }
    return best;
}

static as_status build_shift(const as_mol *sub, const as_sites *sites, int site, int first_end,
                             const as_rule *rule, const groups *g, int to, int migrant,
                             double gain, as_adduct *out, as_error *err)
{
    const as_site *s = &sites->site[site];
    adduct_init(out, site);
    int c1 = s->end[first_end].atom, e = s->end[1 - first_end].atom;
    out->path = migrant < 0 ? AS_PATH_SHIFT_H : AS_PATH_SHIFT_ALKYL;
    out->first_atom = c1;
    out->second_atom = to;
    out->cation_atom = e;
    out->shift_to = to;
    out->migrant = migrant;
    out->shift_gain = gain;
    out->rearranged = 1;
    as_mol *p = as_mol_copy(sub);
    if (!p)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    out->mol = p;
    as_mol_set_bond_order(p, s->bond, AS_BOND_SINGLE);
    for (int i = p->ntetra - 1; i >= 0; i--) /* centres touched by the shift lose marks */
        if (p->tetra[i].center == to || p->tetra[i].center == e ||
            p->tetra[i].center == migrant)
            p->tetra[i] = p->tetra[--p->ntetra];
    if (migrant < 0) {
        add_h(p, to, -1);
        add_h(p, e, +1);
    } else {
        int b = as_mol_bond_between(p, to, migrant);
        if (b < 0 || as_mol_remove_bond(p, b) != AS_OK ||
            as_mol_add_bond(p, e, migrant, AS_BOND_SINGLE) < 0)
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    }
    int x = attach(p, c1, &g->first);
    int y = attach(p, to, &g->second);
    if (x == -2 || y == -2)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    out->first_group = x;
    out->second_group = y;
    as_status st = perceive_product(p, rule, err);
    if (st != AS_OK)
        return st;
    int cand[3] = {c1, e, to};
    return finish_stereo(out, sub, cand, 3, NULL, 0, err);
}

/* ---------------------------------------------------------------- 1,4-addition */

/* 1,4-adduct of the diene a=b–c=d: first on a, second on d, new C=C between b and c. */
static as_status build_diene14(const as_mol *sub, const as_sites *sites, int site,
                               int first_end, const as_rule *rule, const groups *g,
                               as_adduct *out, as_error *err)
{
    const as_site *s = &sites->site[site];
    adduct_init(out, site);
    int a = s->end[first_end].atom, b = s->end[1 - first_end].atom;
    int c = s->end[1 - first_end].vinyl_atom;
    int cs = s->conj_site;
    if (c < 0 || cs < 0)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "not a conjugated diene");
    const as_site *t = &sites->site[cs];
    int d = t->end[0].atom == c ? t->end[1].atom : t->end[0].atom;
    out->path = AS_PATH_DIENE_14;
    out->first_atom = a;
    out->second_atom = d;
    out->cation_atom = b;
    as_mol *p = as_mol_copy(sub);
    if (!p)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    out->mol = p;
    int bc = as_mol_bond_between(p, b, c);
    if (bc < 0)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "diene atoms are not bonded");
    as_mol_set_bond_order(p, s->bond, AS_BOND_SINGLE);
    as_mol_set_bond_order(p, t->bond, AS_BOND_SINGLE);
    as_mol_set_bond_order(p, bc, AS_BOND_DOUBLE);
    /* dbstereo records that used the old single bond b–c as a reference are stale */
    for (int i = p->ndbs - 1; i >= 0; i--) {
        const as_bond *db = &p->bonds[p->dbs[i].bond];
        if (db->order != 2)
            p->dbs[i] = p->dbs[--p->ndbs];
    }
    int x = attach(p, a, &g->first);
    int y = attach(p, d, &g->second);
    if (x == -2 || y == -2)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory building a product");
    out->first_group = x;
    out->second_group = y;
    as_status st = perceive_product(p, rule, err);
    if (st != AS_OK)
        return st;
    int cand[2] = {a, d};
    return finish_stereo(out, sub, cand, 2, NULL, 0, err);
}

/* ---------------------------------------------------------------- the run */

/* Score of putting `first` on end k (lower is better), kcal/mol. */
static double orientation_score(const as_site *s, int k, const as_rule *r)
{
    const as_site_end *here = &s->end[k], *other = &s->end[1 - k];
    switch (r->regio) {
    case AS_REGIO_CATION:
        return other->cation_hia;
    case AS_REGIO_RADICAL:
        return other->radical_bde + RADICAL_ATTACK_KCAL * here->n_heavy;
    case AS_REGIO_BORANE: {
        double bulk = r->bulk > 0 ? r->bulk : 1.0;
        return BORANE_KCAL_PER_STERIC * bulk * here->steric;
    }
    default:
        return 0.0;
    }
}

as_status as_addition_run(const as_mol *sub, const as_sites *sites, int site,
                          const as_rule *rule, const as_rule_variant *variant,
                          const as_addition_opts *opts, as_adducts **out, as_error *err)
{
    *out = NULL;
    if (!sub || !sites || !rule || !variant || site < 0 || site >= sites->n)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "bad arguments to as_addition_run");
    as_addition_opts def;
    if (!opts) {
        as_addition_opts_init(&def);
        opts = &def;
    }
    groups g;
    as_status st = groups_read(rule, variant, &g, err);
    if (st != AS_OK)
        return st;
    as_adducts *l = calloc(1, sizeof *l);
    if (!l) {
        groups_free(&g);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory listing products");
    }
    const as_site *s = &sites->site[site];
    as_adduct ad;
    adduct_init(&ad, site);
    double tie = opts->tie_kcal_x100 / 100.0;

    if (rule->regio == AS_REGIO_NONE || rule->regio == AS_REGIO_CLEAVE) {
        st = place(sub, sites, site, 0, rule, variant, &g, rule->stereo, &ad, err);
        if (st == AS_OK) {
            ad.preferred = 1;
            st = list_push(l, &ad, err);
        }
        goto done;
    }

    /* Conjugate addition of HX to an acceptor-conjugated C=C: protonation at the acceptor
     * (via its enol), nucleophile on the β carbon. */
    if (rule->regio == AS_REGIO_CATION && rule->conjugate && opts->allow_conjugate &&
        s->acceptor_end >= 0 && s->end[s->acceptor_end].acceptor != AS_ACC_PERFLUORO &&
        s->end[1 - s->acceptor_end].acceptor == AS_ACC_NONE) {
        st = place(sub, sites, site, s->acceptor_end, rule, variant, &g, AS_ADD_NONE, &ad, err);
        if (st == AS_OK) {
            ad.path = AS_PATH_CONJUGATE;
            ad.preferred = 1;
            ad.cation_atom = s->end[1 - s->acceptor_end].atom;
            st = list_push(l, &ad, err);
        }
        goto done;
    }

    double sc[2] = {orientation_score(s, 0, rule), orientation_score(s, 1, rule)};
    int pref = sc[0] <= sc[1] ? 0 : 1;
    int alike = fabs(sc[0] - sc[1]) < tie;
    as_addmode mode = rule->stereo;
    if (rule->regio == AS_REGIO_RADICAL && mode == AS_ADD_NONE && s->geometry == AS_GEOM_RING &&
        !isnan(opts->temp_c) && opts->temp_c <= RADICAL_ANTI_MAX_C)
        mode = AS_ADD_ANTI;
    for (int pass = 0; pass < 2 && st == AS_OK; pass++) {
        int k = pass == 0 ? pref : 1 - pref;
        st = place(sub, sites, site, k, rule, variant, &g, mode, &ad, err);
        if (st != AS_OK)
            break;
        ad.preferred = pass == 0;
        ad.ends_alike = alike;
        ad.gap = alike ? 0.0 : sc[k] - sc[pref];
        ad.score_first = sc[k];
        if (rule->regio == AS_REGIO_CATION || rule->regio == AS_REGIO_RADICAL)
            ad.cation_atom = s->end[1 - k].atom;
        int direct = l->n;
        st = list_push(l, &ad, err);
        if (st != AS_OK)
            break;
        /* Shifts of the free cation, for the orientations that matter. */
        if (rule->regio == AS_REGIO_CATION && rule->shifts && opts->allow_shifts &&
            (pass == 0 || alike)) {
            int to, migrant;
            int e = s->end[1 - k].atom, q = s->end[k].atom;
            double gain = best_shift(sub, s, e, q, &to, &migrant);
            if (gain > 0.0) {
                st = build_shift(sub, sites, site, k, rule, &g, to, migrant, gain, &ad, err);
                if (st != AS_OK)
                    break;
                ad.preferred = l->v[direct].preferred;
                ad.ends_alike = alike;
                ad.gap = l->v[direct].gap;
                ad.score_first = sc[k];
                st = list_push(l, &ad, err);
            }
        }
        /* 1,4-adduct when the cation is allylic within a conjugated diene. */
        if (st == AS_OK && rule->regio == AS_REGIO_CATION && rule->conjugate &&
            opts->allow_conjugate && s->conj_site >= 0 && s->end[1 - k].vinyl_atom >= 0 &&
            (pass == 0 || alike)) {
            st = build_diene14(sub, sites, site, k, rule, &g, &ad, err);
            if (st != AS_OK)
                break;
            ad.preferred = l->v[direct].preferred;
            ad.ends_alike = alike;
            ad.gap = l->v[direct].gap;
            ad.score_first = sc[k];
            st = list_push(l, &ad, err);
        }
    }
done:
    as_adduct_clear(&ad);
    groups_free(&g);
    if (st != AS_OK) {
        as_adducts_free(l);
        return st;
    }
    *out = l;
    return AS_OK;
}
