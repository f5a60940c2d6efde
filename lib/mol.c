/* mol.c — the molecule graph: atoms, bonds and stereo records linked by index.
 * Owns: one allocation owner per molecule. Must not: know SMILES or chemistry rules. */
#include "addsite/mol.h"
#include "status_int.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- element data */

/* Symbols by atomic number (index = Z); source: IUPAC periodic table. */
static const char *const element_symbols[] = {
    "*",  "H",  "He", "Li", "Be", "B",  "C",  "N",  "O",  "F",  "Ne", "Na", "Mg", "Al", "Si",
    "P",  "S",  "Cl", "Ar", "K",  "Ca", "Sc", "Ti", "V",  "Cr", "Mn", "Fe", "Co", "Ni", "Cu",
    "Zn", "Ga", "Ge", "As", "Se", "Br", "Kr", "Rb", "Sr", "Y",  "Zr", "Nb", "Mo", "Tc", "Ru",
    "Rh", "Pd", "Ag", "Cd", "In", "Sn", "Sb", "Te", "I",  "Xe", "Cs", "Ba", "La", "Ce", "Pr",
    "Nd", "Pm", "Sm", "Eu", "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Yb", "Lu", "Hf", "Ta", "W",
    "Re", "Os", "Ir", "Pt", "Au", "Hg", "Tl", "Pb", "Bi", "Po", "At", "Rn", "Fr", "Ra", "Ac",
    "Th", "Pa", "U",  "Np", "Pu", "Am", "Cm", "Bk", "Cf", "Es", "Fm", "Md", "No", "Lr", "Rf",
    "Db", "Sg", "Bh", "Hs", "Mt", "Ds", "Rg", "Cn", "Nh", "Fl", "Mc", "Lv", "Ts", "Og",
};
#define N_ELEMENTS ((int)(sizeof element_symbols / sizeof element_symbols[0]))

/* Standard atomic weights, g/mol, for Z = 0..56 and a few heavier elements used in reagents;
 * source: IUPAC 2013 abridged standard atomic weights (conventional values). 0 = not listed. */
static const double element_masses[] = {
    0.0,    1.008,  4.0026, 6.94,   9.0122, 10.81,  12.011, 14.007, 15.999, 18.998, 20.180,
    22.990, 24.305, 26.982, 28.085, 30.974, 32.06,  35.45,  39.948, 39.098, 40.078, 44.956,
    47.867, 50.942, 51.996, 54.938, 55.845, 58.933, 58.693, 63.546, 65.38,  69.723, 72.630,
    74.922, 78.971, 79.904, 83.798, 85.468, 87.62,  88.906, 91.224, 92.906, 95.95,  0.0,
    101.07, 102.91, 106.42, 107.87, 112.41, 114.82, 118.71, 121.76, 127.60, 126.90, 131.29,
    132.91, 137.33,
};
#define N_MASSES ((int)(sizeof element_masses / sizeof element_masses[0]))

const char *as_element_symbol(int elem)
{
    if (elem < 0 || elem >= N_ELEMENTS)
        return NULL;
    return element_symbols[elem];
}

int as_element_number(const char *sym, size_t len)
{
    if (len == 0 || len > 2)
        return -1;
    for (int z = 1; z < N_ELEMENTS; z++) {
        const char *s = element_symbols[z];
        if (strlen(s) == len && memcmp(s, sym, len) == 0)
            return z;
    }
    return -1;
}

double as_element_mass(int elem)
{
    if (elem == 80)
        return 200.59; /* Hg, IUPAC 2013 */
    if (elem < 0 || elem >= N_MASSES)
        return 0.0;
    return element_masses[elem];
}

/* ---------------------------------------------------------------- lifetime */

/* Arrays that may live inside the molecule's own block (as_mol.inline_arrays bits): such an
 * array is never passed to realloc or free; growing it moves it to an allocation of its own.
 * Copies and molecules read from SMILES then cost one malloc and one free instead of up to
 * eight, and need no realloc while the reader adds atoms. */
enum { IN_ATOMS = 1, IN_BONDS = 2, IN_TETRA = 4, IN_DBS = 8, IN_RSTART = 16, IN_RATOMS = 32 };

static size_t round8(size_t n)
{
    return (n + 7) & ~(size_t)7;
}

/* One block: the molecule, then room for the given numbers of each record. */
static as_mol *mol_block(int atoms, int bonds, int tetra, int dbs, int rstart, int ratoms)
{
    size_t sz = round8(sizeof(as_mol)), off[6];
    const size_t n[6] = {(size_t)atoms * sizeof(as_atom), (size_t)bonds * sizeof(as_bond),
                         (size_t)tetra * sizeof(as_tetra), (size_t)dbs * sizeof(as_dbstereo),
                         (size_t)rstart * sizeof(int), (size_t)ratoms * sizeof(int)};
    for (int i = 0; i < 6; i++) {
        off[i] = sz;
        sz += round8(n[i]);
    }
    unsigned char *blk = malloc(sz);
    if (!blk)
        return NULL;
    as_mol *m = (as_mol *)blk;
    memset(m, 0, sizeof *m);
    if (atoms > 0) {
        m->atoms = (as_atom *)(blk + off[0]);
        m->cap_atoms = atoms;
        m->inline_arrays |= IN_ATOMS;
    }
    if (bonds > 0) {
        m->bonds = (as_bond *)(blk + off[1]);
        m->cap_bonds = bonds;
        m->inline_arrays |= IN_BONDS;
    }
    if (tetra > 0) {
        m->tetra = (as_tetra *)(blk + off[2]);
        m->cap_tetra = tetra;
        m->inline_arrays |= IN_TETRA;
    }
    if (dbs > 0) {
        m->dbs = (as_dbstereo *)(blk + off[3]);
        m->cap_dbs = dbs;
        m->inline_arrays |= IN_DBS;
    }
    if (rstart > 0) {
        m->ring_start = (int *)(blk + off[4]);
        m->inline_arrays |= IN_RSTART;
    }
    if (ratoms > 0) {
        m->ring_atoms = (int *)(blk + off[5]);
        m->inline_arrays |= IN_RATOMS;
    }
    return m;
}

as_mol *as_mol_new(void)
{
    return calloc(1, sizeof(as_mol));
}

as_mol *as_mol_new_sized(int atoms, int bonds)
{
    return mol_block(atoms > 0 ? atoms : 0, bonds > 0 ? bonds : 0, 0, 0, 0, 0);
}

static void free_unless(void *p, unsigned inline_arrays, unsigned bit)
{
    if (!(inline_arrays & bit))
        free(p);
}

void as_mol_free(as_mol *m)
{
    if (!m)
        return;
    unsigned in = m->inline_arrays;
    free_unless(m->atoms, in, IN_ATOMS);
    free_unless(m->bonds, in, IN_BONDS);
    free_unless(m->tetra, in, IN_TETRA);
    free_unless(m->dbs, in, IN_DBS);
    free_unless(m->ring_start, in, IN_RSTART);
    free_unless(m->ring_atoms, in, IN_RATOMS);
    free(m->title);
    free(m);
}

void as_mol_set_rings(as_mol *m, int nrings, int *ring_start, int *ring_atoms)
{
    free_unless(m->ring_start, m->inline_arrays, IN_RSTART);
    free_unless(m->ring_atoms, m->inline_arrays, IN_RATOMS);
    m->inline_arrays &= ~(unsigned)(IN_RSTART | IN_RATOMS);
    m->nrings = nrings;
    m->ring_start = ring_start;
    m->ring_atoms = ring_atoms;
}

/* Room kept in a copy for what the addition step appends (reagent atoms, stereo records). */
#define COPY_SLACK 8

as_mol *as_mol_copy(const as_mol *m)
{
    int nring_atoms = m->nrings ? m->ring_start[m->nrings] : 0;
    as_mol *c = mol_block(m->natoms + COPY_SLACK, m->nbonds + COPY_SLACK, m->ntetra + 2,
                          m->ndbs + 2, m->nrings ? m->nrings + 1 : 0, nring_atoms);
    if (!c)
        return NULL;
    char *title = NULL;
    if (m->title && !(title = strdup(m->title))) {
        as_mol_free(c);
        return NULL;
    }
    memcpy(c->atoms, m->atoms, (size_t)m->natoms * sizeof(as_atom));
    memcpy(c->bonds, m->bonds, (size_t)m->nbonds * sizeof(as_bond));
    if (m->ntetra)
        memcpy(c->tetra, m->tetra, (size_t)m->ntetra * sizeof(as_tetra));
    if (m->ndbs)
        memcpy(c->dbs, m->dbs, (size_t)m->ndbs * sizeof(as_dbstereo));
    if (m->nrings) {
        memcpy(c->ring_start, m->ring_start, (size_t)(m->nrings + 1) * sizeof(int));
        memcpy(c->ring_atoms, m->ring_atoms, (size_t)nring_atoms * sizeof(int));
    }
    c->natoms = m->natoms;
    c->nbonds = m->nbonds;
    c->ntetra = m->ntetra;
    c->ndbs = m->ndbs;
    c->nrings = m->nrings;
    c->title = title;
    c->perceived = m->perceived;
    c->rings_known = m->rings_known;
    return c;
}

/* Grows *arr (of *cap elements of size) to hold need; returns 0 on success. An array inside
 * the molecule's block moves to an allocation of its own. */
static int grow(as_mol *m, unsigned bit, void **arr, int *cap, int need, size_t size)
{
    if (need <= *cap)
        return 0;
    int ncap = *cap ? *cap * 2 : 16;
    while (ncap < need)
        ncap *= 2;
    void *p;
    if (m->inline_arrays & bit) {
        p = malloc((size_t)ncap * size);
        if (p && *cap)
            memcpy(p, *arr, (size_t)*cap * size);
    } else {
        p = realloc(*arr, (size_t)ncap * size);
    }
    if (!p)
        return -1;
    m->inline_arrays &= ~bit;
    *arr = p;
    *cap = ncap;
    return 0;
}

static void invalidate(as_mol *m)
{
    m->perceived = 0;
}

/* ---------------------------------------------------------------- building */

int as_mol_add_atom(as_mol *m, int elem)
{
    if (grow(m, IN_ATOMS, (void **)&m->atoms, &m->cap_atoms, m->natoms + 1, sizeof(as_atom)))
        return -1;
    as_atom *a = &m->atoms[m->natoms];
    memset(a, 0, sizeof *a);
    a->elem = elem;
    a->isotope = -1;
    a->hcount = -1;
    a->src_offset = -1;
    invalidate(m);
    return m->natoms++;
}

int as_mol_bond_between(const as_mol *m, int a, int b)
{
    if (a < 0 || a >= m->natoms)
        return -1;
    const as_atom *at = &m->atoms[a];
    for (int i = 0; i < at->degree; i++)
        if (at->nbr[i] == b)
            return at->nbond[i];
    return -1;
}

int as_mol_add_bond(as_mol *m, int a, int b, int order)
{
    if (a == b || a < 0 || b < 0 || a >= m->natoms || b >= m->natoms)
        return -1;
    if (as_mol_bond_between(m, a, b) >= 0)
        return -1;
    if (m->atoms[a].degree >= AS_MAX_DEGREE || m->atoms[b].degree >= AS_MAX_DEGREE)
        return -1;
    if (grow(m, IN_BONDS, (void **)&m->bonds, &m->cap_bonds, m->nbonds + 1, sizeof(as_bond)))
        return -1;
    if (m->atoms[a].degree && m->atoms[b].degree)
        m->rings_known = 0; /* may close a ring; a bond to a bare atom cannot */
    int idx = m->nbonds++;
    as_bond *bd = &m->bonds[idx];
    memset(bd, 0, sizeof *bd);
    bd->a = a;
    bd->b = b;
    bd->order = order;
    as_atom *x = &m->atoms[a], *y = &m->atoms[b];
    x->nbr[x->degree] = b;
    x->nbond[x->degree++] = idx;
    y->nbr[y->degree] = a;
    y->nbond[y->degree++] = idx;
    invalidate(m);
    return idx;
}

int as_mol_add_tetra(as_mol *m, const as_tetra *t)
{
    if (grow(m, IN_TETRA, (void **)&m->tetra, &m->cap_tetra, m->ntetra + 1, sizeof(as_tetra)))
        return -1;
    m->tetra[m->ntetra] = *t;
    return m->ntetra++;
}

int as_mol_add_dbstereo(as_mol *m, const as_dbstereo *d)
{
    if (grow(m, IN_DBS, (void **)&m->dbs, &m->cap_dbs, m->ndbs + 1, sizeof(as_dbstereo)))
        return -1;
    m->dbs[m->ndbs] = *d;
    return m->ndbs++;
}

int as_mol_find_tetra(const as_mol *m, int a)
{
    for (int i = 0; i < m->ntetra; i++)
        if (m->tetra[i].center == a)
            return i;
    return -1;
}

int as_mol_find_dbstereo(const as_mol *m, int b)
{
    for (int i = 0; i < m->ndbs; i++)
        if (m->dbs[i].bond == b)
            return i;
    return -1;
}

as_status as_mol_set_title(as_mol *m, const char *text, size_t len)
{
    free(m->title);
    m->title = NULL;
    if (!text)
        return AS_OK;
    m->title = malloc(len + 1);
    if (!m->title)
        return AS_ERR_NOMEM;
    memcpy(m->title, text, len);
    m->title[len] = '\0';
    return AS_OK;
}

/* ---------------------------------------------------------------- editing */

static void drop_dbstereo_at(as_mol *m, int i)
{
    m->dbs[i] = m->dbs[m->ndbs - 1];
    m->ndbs--;
}

void as_mol_set_bond_order(as_mol *m, int b, int order)
{
    m->bonds[b].order = order;
    int d = as_mol_find_dbstereo(m, b);
    if (d >= 0)
        drop_dbstereo_at(m, d);
    invalidate(m);
}

/* Removes adjacency entry of nbr from atom a. */
static void unlink_nbr(as_atom *a, int nbr)
{
    for (int i = 0; i < a->degree; i++) {
        if (a->nbr[i] == nbr) {
            memmove(&a->nbr[i], &a->nbr[i + 1], (size_t)(a->degree - i - 1) * sizeof(int));
            memmove(&a->nbond[i], &a->nbond[i + 1], (size_t)(a->degree - i - 1) * sizeof(int));
            a->degree--;
            return;
        }
    }
}

as_status as_mol_remove_bond(as_mol *m, int b)
{
    if (b < 0 || b >= m->nbonds)
        return AS_ERR_ARG;
    as_bond bd = m->bonds[b];
    if (bd.ring_size)
        m->rings_known = 0; /* opens a ring; the other bonds keep their relative order */
    unlink_nbr(&m->atoms[bd.a], bd.b);
    unlink_nbr(&m->atoms[bd.b], bd.a);
    int d = as_mol_find_dbstereo(m, b);
    if (d >= 0)
        drop_dbstereo_at(m, d);
    /* Drop double-bond records whose reference atoms were joined by this bond. */
    for (int i = m->ndbs - 1; i >= 0; i--) {
        const as_bond *db = &m->bonds[m->dbs[i].bond];
        if ((db->a == bd.a && m->dbs[i].ref_a == bd.b) || (db->a == bd.b && m->dbs[i].ref_a == bd.a) ||
            (db->b == bd.a && m->dbs[i].ref_b == bd.b) || (db->b == bd.b && m->dbs[i].ref_b == bd.a))
            drop_dbstereo_at(m, i);
    }
    memmove(&m->bonds[b], &m->bonds[b + 1], (size_t)(m->nbonds - b - 1) * sizeof(as_bond));
    m->nbonds--;
    for (int i = 0; i < m->natoms; i++)
        for (int k = 0; k < m->atoms[i].degree; k++)
            if (m->atoms[i].nbond[k] > b)
                m->atoms[i].nbond[k]--;
    for (int i = 0; i < m->ndbs; i++)
        if (m->dbs[i].bond > b)
            m->dbs[i].bond--;
    invalidate(m);
    return AS_OK;
}

as_status as_mol_remove_atom(as_mol *m, int a)
{
    if (a < 0 || a >= m->natoms)
        return AS_ERR_ARG;
    int was_h = m->atoms[a].elem == 1;
    m->rings_known = 0; /* the ring list names atoms by index */
    while (m->atoms[a].degree > 0) {
        as_status s = as_mol_remove_bond(m, m->atoms[a].nbond[0]);
        if (s != AS_OK)
            return s;
    }
    for (int i = m->ntetra - 1; i >= 0; i--) {
        as_tetra *t = &m->tetra[i];
        int drop = t->center == a;
        for (int k = 0; k < 4 && !drop; k++) {
            if (t->nbr[k] == a) {
                if (was_h)
                    t->nbr[k] = AS_IMPLICIT_H;
                else
                    drop = 1;
            }
        }
        if (drop)
            m->tetra[i] = m->tetra[--m->ntetra];
    }
    for (int i = m->ndbs - 1; i >= 0; i--)
        if (m->dbs[i].ref_a == a || m->dbs[i].ref_b == a)
            drop_dbstereo_at(m, i);
    memmove(&m->atoms[a], &m->atoms[a + 1], (size_t)(m->natoms - a - 1) * sizeof(as_atom));
    m->natoms--;
    for (int i = 0; i < m->natoms; i++)
        for (int k = 0; k < m->atoms[i].degree; k++)
            if (m->atoms[i].nbr[k] > a)
                m->atoms[i].nbr[k]--;
    for (int i = 0; i < m->nbonds; i++) {
        if (m->bonds[i].a > a)
            m->bonds[i].a--;
        if (m->bonds[i].b > a)
            m->bonds[i].b--;
    }
    for (int i = 0; i < m->ntetra; i++) {
        if (m->tetra[i].center > a)
            m->tetra[i].center--;
        for (int k = 0; k < 4; k++)
            if (m->tetra[i].nbr[k] > a)
                m->tetra[i].nbr[k]--;
    }
    for (int i = 0; i < m->ndbs; i++) {
        if (m->dbs[i].ref_a > a)
            m->dbs[i].ref_a--;
        if (m->dbs[i].ref_b > a)
            m->dbs[i].ref_b--;
    }
    invalidate(m);
    return AS_OK;
}

/* ---------------------------------------------------------------- components */

int as_mol_components(const as_mol *m, int *comp)
{
    int natoms = m->natoms;
    if (natoms == 0)
        return 0;
    int local[256];
    int *stack = natoms <= 256 ? local : malloc((size_t)natoms * sizeof(int));
    if (!stack)
        return -1;
    /* locals, so that the stores to comp need not reload the molecule's fields */
    const as_atom *atoms = m->atoms;
    for (int i = 0; i < natoms; i++)
        comp[i] = -1;
    int n = 0;
    for (int s = 0; s < natoms; s++) {
        if (comp[s] >= 0)
            continue;
        int top = 0;
        stack[top++] = s;
        comp[s] = n;
        while (top) {
            const as_atom *x = &atoms[stack[--top]];
            int deg = x->degree;
            for (int k = 0; k < deg; k++) {
                int y = x->nbr[k];
                if (comp[y] < 0) {
                    comp[y] = n;
                    stack[top++] = y;
                }
            }
        }
        n++;
    }
    if (stack != local)
        free(stack);
    return n;
}

as_mol *as_mol_extract(const as_mol *m, const int *comp, int which)
{
    as_mol *out = as_mol_new();
    int *map = malloc((size_t)(m->natoms ? m->natoms : 1) * sizeof(int));
    if (!out || !map)
        goto fail;
    for (int i = 0; i < m->natoms; i++) {
        map[i] = -1;
        if (comp[i] != which)
            continue;
        int k = as_mol_add_atom(out, m->atoms[i].elem);
        if (k < 0)
            goto fail;
        as_atom *dst = &out->atoms[k];
        *dst = m->atoms[i];
        dst->degree = 0;
        map[i] = k;
    }
    for (int i = 0; i < m->nbonds; i++) {
        const as_bond *b = &m->bonds[i];
        if (map[b->a] < 0 || map[b->b] < 0)
            continue;
        int k = as_mol_add_bond(out, map[b->a], map[b->b], b->order);
        if (k < 0)
            goto fail;
        out->bonds[k].aromatic = b->aromatic;
        out->bonds[k].ring_size = b->ring_size;
    }
    for (int i = 0; i < m->ntetra; i++) {
        as_tetra t = m->tetra[i];
        if (map[t.center] < 0)
            continue;
        t.center = map[t.center];
        for (int k = 0; k < 4; k++)
            if (t.nbr[k] >= 0)
                t.nbr[k] = map[t.nbr[k]];
        if (as_mol_add_tetra(out, &t) < 0)
            goto fail;
    }
    for (int i = 0; i < m->ndbs; i++) {
        as_dbstereo d = m->dbs[i];
        const as_bond *b = &m->bonds[d.bond];
        if (map[b->a] < 0)
            continue;
        d.bond = as_mol_bond_between(out, map[b->a], map[b->b]);
        d.ref_a = map[d.ref_a];
        d.ref_b = map[d.ref_b];
        if (as_mol_add_dbstereo(out, &d) < 0)
            goto fail;
    }
    free(map);
    return out;
fail:
    free(map);
    as_mol_free(out);
    return NULL;
}

int as_mol_append(as_mol *dst, const as_mol *src)
{
    int off = dst->natoms;
    /* the copied atoms and bonds carry src's ring sizes; the bonds themselves are judged one
     * by one in as_mol_add_bond */
    for (int i = 0; i < src->natoms && dst->rings_known; i++)
        if (src->atoms[i].ring_size)
            dst->rings_known = 0;
    for (int i = 0; i < src->nbonds && dst->rings_known; i++)
        if (src->bonds[i].ring_size)
            dst->rings_known = 0;
    for (int i = 0; i < src->natoms; i++) {
        int k = as_mol_add_atom(dst, src->atoms[i].elem);
        if (k < 0)
            return -1;
        dst->atoms[k] = src->atoms[i];
        dst->atoms[k].degree = 0;
    }
    for (int i = 0; i < src->nbonds; i++) {
        const as_bond *b = &src->bonds[i];
        int k = as_mol_add_bond(dst, b->a + off, b->b + off, b->order);
        if (k < 0)
            return -1;
        dst->bonds[k].aromatic = b->aromatic;
        dst->bonds[k].ring_size = b->ring_size;
    }
    int boff = dst->nbonds - src->nbonds;
    for (int i = 0; i < src->ntetra; i++) {
        as_tetra t = src->tetra[i];
        t.center += off;
        for (int k = 0; k < 4; k++)
            if (t.nbr[k] >= 0)
                t.nbr[k] += off;
        if (as_mol_add_tetra(dst, &t) < 0)
            return -1;
    }
    for (int i = 0; i < src->ndbs; i++) {
        as_dbstereo d = src->dbs[i];
        d.bond += boff;
        d.ref_a += off;
        d.ref_b += off;
        if (as_mol_add_dbstereo(dst, &d) < 0)
            return -1;
    }
    return off;
}

/* ---------------------------------------------------------------- queries */

int as_mol_bond_order_sum(const as_mol *m, int a)
{
    int sum = 0;
    const as_atom *at = &m->atoms[a];
    for (int i = 0; i < at->degree; i++) {
        int o = m->bonds[at->nbond[i]].order;
        sum += o == AS_BOND_AROMATIC ? 1 : o;
    }
    return sum;
}

as_status as_mol_formula(const as_mol *m, char *buf, size_t cap)
{
    int counts[128] = {0};
    int hyd = 0, charge = 0;
    for (int i = 0; i < m->natoms; i++) {
        const as_atom *a = &m->atoms[i];
        if (a->elem > 0 && a->elem < 128)
            counts[a->elem]++;
        hyd += a->total_h;
        charge += a->charge;
    }
    counts[1] += hyd;
    size_t used = 0;
    int order[128], n = 0;
    /* Hill order: C, H, then the rest alphabetically; without carbon all alphabetically. */
    if (counts[6]) {
        order[n++] = 6;
        if (counts[1])
            order[n++] = 1;
    }
    int rest[128], nr = 0;
    for (int z = 1; z < 128 && z < N_ELEMENTS; z++)
        if (counts[z] && !(counts[6] && (z == 6 || z == 1)))
            rest[nr++] = z;
    for (int i = 1; i < nr; i++)
        for (int j = i; j > 0 && strcmp(element_symbols[rest[j - 1]], element_symbols[rest[j]]) > 0; j--) {
            int t = rest[j];
            rest[j] = rest[j - 1];
            rest[j - 1] = t;
        }
    for (int i = 0; i < nr; i++)
        order[n++] = rest[i];
    if (cap == 0)
        return AS_ERR_LIMIT;
    buf[0] = '\0';
    for (int i = 0; i < n; i++) {
        int z = order[i];
        int w = counts[z] > 1 ? snprintf(buf + used, cap - used, "%s%d", element_symbols[z], counts[z])
                              : snprintf(buf + used, cap - used, "%s", element_symbols[z]);
        if (w < 0 || (size_t)w >= cap - used)
            return AS_ERR_LIMIT;
        used += (size_t)w;
    }
    if (charge) {
        int w = charge == 1 ? snprintf(buf + used, cap - used, "+")
              : charge == -1 ? snprintf(buf + used, cap - used, "-")
                             : snprintf(buf + used, cap - used, "%+d", charge);
        if (w < 0 || (size_t)w >= cap - used)
            return AS_ERR_LIMIT;
    }
    return AS_OK;
}

as_status as_mol_check(const as_mol *m, as_error *err)
{
    for (int i = 0; i < m->nbonds; i++) {
        const as_bond *b = &m->bonds[i];
        if (b->a < 0 || b->a >= m->natoms || b->b < 0 || b->b >= m->natoms || b->a == b->b)
            return as_error_set(err, AS_ERR_ARG, -1, -1, "bond %d has bad atom indices", i);
        if (as_mol_bond_between(m, b->a, b->b) != i || as_mol_bond_between(m, b->b, b->a) != i)
            return as_error_set(err, AS_ERR_ARG, -1, b->a, "bond %d missing from adjacency", i);
    }
    int deg_total = 0;
    for (int i = 0; i < m->natoms; i++)
        deg_total += m->atoms[i].degree;
    if (deg_total != 2 * m->nbonds)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "adjacency lists do not match bond list");
    for (int i = 0; i < m->ntetra; i++) {
        const as_tetra *t = &m->tetra[i];
        if (t->center < 0 || t->center >= m->natoms)
            return as_error_set(err, AS_ERR_ARG, -1, -1, "stereo record %d has bad centre", i);
        for (int k = 0; k < 4; k++)
            if (t->nbr[k] != AS_IMPLICIT_H && as_mol_bond_between(m, t->center, t->nbr[k]) < 0)
                return as_error_set(err, AS_ERR_ARG, -1, t->center,
                                    "stereo record %d names a non-neighbour", i);
    }
    for (int i = 0; i < m->ndbs; i++) {
        const as_dbstereo *d = &m->dbs[i];
        if (d->bond < 0 || d->bond >= m->nbonds)
            return as_error_set(err, AS_ERR_ARG, -1, -1, "double-bond record %d has bad bond", i);
        const as_bond *b = &m->bonds[d->bond];
        if (as_mol_bond_between(m, b->a, d->ref_a) < 0 || as_mol_bond_between(m, b->b, d->ref_b) < 0)
            return as_error_set(err, AS_ERR_ARG, -1, b->a,
                                "double-bond record %d names a non-neighbour", i);
    }
    return AS_OK;
}
