/* smiles_read.c — the OpenSMILES-subset reader: text → as_mol, with byte offsets in errors.
 * Owns: tokenising and graph building, ring-closure and branch bookkeeping, the neighbour
 * order that @/@@ refer to, and / \ marks turned into double-bond records.
 * Must not: perceive chemistry (implicit H, rings, aromaticity belong to perceive.c). */
#include "addsite/smiles.h"
#include "addsite/perceive.h"
#include "status_int.h"

#include <ctype.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- parser state */

#define N_RING_NUMBERS 100 /* 0-9 and %00-%99 share one number space */

typedef struct ring_open {
    int atom;      /* atom that opened it, -1 when free */
    int order;     /* bond order written at the opening digit, 0 when none */
    char dir;      /* '/' or '\\' written at the opening digit, 0 when none */
    long offset;   /* byte offset of the digit */
    long bond_off; /* byte offset of the bond symbol, or -1 */
    int slot;      /* index into the opener's written-order list reserved for the partner */
} ring_open;

/* Neighbour order as written, per atom; needed for @/@@. Stored for every atom since a
 * later chiral atom's neighbours include earlier atoms. */
typedef struct written_order {
    int n;
    int has_from;   /* 1 when item[0] is the atom this one was reached from */
    int nclosures;  /* ring-closure digits written on this atom */
    int item[AS_MAX_DEGREE + 1]; /* atom index, AS_IMPLICIT_H, or -2 - ring number (pending) */
} written_order;

typedef struct branch_frame {
    int atom;
    long offset;
} branch_frame;

typedef struct parser {
    const char *s;
    size_t len;
    size_t pos;
    as_mol *m;
    as_error *err;
    int open_rings;
    branch_frame *stack;
    int depth, cap_depth;
    written_order *order; /* per atom */
    int cap_order;
    char *chiral;         /* per atom: 0, AS_CCW, AS_CW */
    char *bond_dir;       /* per bond: 0, '/', '\\' */
    int *bond_dir_from;   /* per bond: the atom the mark is read from */
    long *bond_dir_off;   /* per bond: offset of the mark */
    int cap_bonds;
    void *side_heap;      /* the block of the five side tables when on the heap, else NULL */
    uint64_t rings_seen[2]; /* bit n set: rings[n] holds data (else it is free, unset) */
    /* Not cleared when a parse starts (the fields above are): */
    ring_open rings[N_RING_NUMBERS];
    uint64_t side_local[768]; /* their block for ordinary molecules (up to about 80 atoms) */
} parser;

/* The ring-closure slot of number num, marked free the first time it is used. */
static ring_open *ring_slot(parser *p, int num)
{
    uint64_t bit = (uint64_t)1 << (num % 64);
    if (!(p->rings_seen[num / 64] & bit)) {
        p->rings_seen[num / 64] |= bit;
        p->rings[num].atom = -1;
    }
    return &p->rings[num];
}

static as_status fail(parser *p, as_status code, long offset, const char *fmt, const char *tok)
{
    return as_error_set(p->err, code, offset, -1, fmt, tok ? tok : "");
}

/* ---------------------------------------------------------------- per-atom/bond side tables */

static int is_space(char c)
{
    return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\v' || c == '\f';
}


static size_t al8(size_t n)
{
    return (n + 7) & ~(size_t)7;
}

/* Moves the side tables to a block for na atoms and nb bonds (the parser's own storage when
 * it is still free and large enough, else the heap), keeping their contents. */
static int side_alloc(parser *p, int na, int nb)
{
    size_t so = al8((size_t)na * sizeof(written_order)), sc = al8((size_t)na);
    size_t sd = al8((size_t)nb), sf = al8((size_t)nb * sizeof(int));
    size_t sz = so + sc + sd + sf + al8((size_t)nb * sizeof(long));
    unsigned char *blk;
    int on_heap = 0;
    if (!p->order && sz <= sizeof p->side_local) {
        blk = (unsigned char *)p->side_local;
    } else {
        blk = malloc(sz);
        if (!blk)
            return -1;
        on_heap = 1;
    }
    written_order *o = (written_order *)blk;
    char *c = (char *)(blk + so);
    char *d = (char *)(blk + so + sc);
    int *f = (int *)(blk + so + sc + sd);
    long *off = (long *)(blk + so + sc + sd + sf);
    if (p->order) {
        int ka = p->m->natoms < p->cap_order ? p->m->natoms : p->cap_order;
        int kb = p->m->nbonds < p->cap_bonds ? p->m->nbonds : p->cap_bonds;
        memcpy(o, p->order, (size_t)ka * sizeof *o);
        memcpy(c, p->chiral, (size_t)ka);
        memcpy(d, p->bond_dir, (size_t)kb);
        memcpy(f, p->bond_dir_from, (size_t)kb * sizeof *f);
        memcpy(off, p->bond_dir_off, (size_t)kb * sizeof *off);
    }
    free(p->side_heap);
    p->side_heap = on_heap ? blk : NULL;
    p->order = o;
    p->chiral = c;
    p->bond_dir = d;
    p->bond_dir_from = f;
    p->bond_dir_off = off;
    p->cap_order = na;
    p->cap_bonds = nb;
    return 0;
}

static int grow_side(parser *p)
{
    if (p->m->natoms <= p->cap_order && p->m->nbonds <= p->cap_bonds)
        return 0;
    int na = p->cap_order, nb = p->cap_bonds;
    if (p->m->natoms > na) {
        na = na ? na * 2 : 64;
        while (na < p->m->natoms)
            na *= 2;
    }
    if (p->m->nbonds > nb) {
        nb = nb ? nb * 2 : 64;
        while (nb < p->m->nbonds)
            nb *= 2;
    }
    return side_alloc(p, na, nb);
}

/* Upper bounds of the atoms and bonds of the SMILES at the start of s: an atom starts with
 * '[', a letter or '*' outside brackets; a bond is a chain bond (at most one per atom) or a
 * ring closure (at most one per digit outside brackets). */
static void size_bounds(const char *s, size_t len, int *atoms, int *bonds)
{
    size_t na = 0, nd = 0;
    int in_bracket = 0;
    for (size_t i = 0; i < len; i++) {
        unsigned char c = (unsigned char)s[i];
        if (in_bracket) {
            in_bracket = c != ']';
        } else if (c == '[') {
            in_bracket = 1;
            na++;
        } else if (isalpha(c) || c == '*') {
            na++;
        } else if (isdigit(c)) {
            nd++;
        } else if (is_space((char)c)) {
            break;
        }
    }
    if (na > AS_SMILES_MAX_ATOMS)
        na = AS_SMILES_MAX_ATOMS;
    *atoms = (int)na;
    *bonds = (int)(na + (nd < AS_SMILES_MAX_ATOMS ? nd : AS_SMILES_MAX_ATOMS));
}

static void order_push(parser *p, int atom, int item)
{
    written_order *o = &p->order[atom];
    if (o->n < AS_MAX_DEGREE + 1)
        o->item[o->n++] = item;
}

/* ---------------------------------------------------------------- atoms */

typedef struct atom_spec {
    int elem, aromatic, isotope, hcount, charge, mapnum, chiral, bracket;
} atom_spec;

/* Reads an organic-subset atom at p->pos; returns AS_OK and fills spec. */
static as_status read_organic(parser *p, atom_spec *a)
{
    const char *s = p->s + p->pos;
    size_t left = p->len - p->pos;
    memset(a, 0, sizeof *a);
    a->isotope = -1;
    a->hcount = -1;
    char c = s[0];
    size_t used = 1;
    switch (c) {
    case 'B':
        if (left > 1 && s[1] == 'r') {
            a->elem = 35;
            used = 2;
        } else
            a->elem = 5;
        break;
    case 'C':
        if (left > 1 && s[1] == 'l') {
            a->elem = 17;
            used = 2;
        } else
            a->elem = 6;
        break;
    case 'N': a->elem = 7; break;
    case 'O': a->elem = 8; break;
    case 'P': a->elem = 15; break;
    case 'S': a->elem = 16; break;
    case 'F': a->elem = 9; break;
    case 'I': a->elem = 53; break;
    case '*': a->elem = 0; break;
    case 'b': a->elem = 5; a->aromatic = 1; break;
    case 'c': a->elem = 6; a->aromatic = 1; break;
    case 'n': a->elem = 7; a->aromatic = 1; break;
    case 'o': a->elem = 8; a->aromatic = 1; break;
    case 'p': a->elem = 15; a->aromatic = 1; break;
    case 's': a->elem = 16; a->aromatic = 1; break;
    default: {
        if (islower((unsigned char)c)) {
            /* "Na", "Fe": an element written without brackets */
            if (p->pos > 0 && isupper((unsigned char)p->s[p->pos - 1])) {
                char el[3] = {p->s[p->pos - 1], c, 0};
                if (as_element_number(el, 2) > 0)
                    return fail(p, AS_ERR_ELEMENT, (long)p->pos - 1,
                                "'%s' is not in the organic subset; write it in brackets",
                                el);
            }
            char one[2] = {c, 0};
            return fail(p, AS_ERR_ELEMENT, (long)p->pos, "'%s' is not an atom symbol", one);
        }
        char tok[3] = {c, 0, 0};
        if (isupper((unsigned char)c) && left > 1 && islower((unsigned char)s[1]))
            tok[1] = s[1];
        int z = as_element_number(tok, strlen(tok));
        if (z < 0 && tok[1]) {
            tok[1] = 0;
            z = as_element_number(tok, 1);
        }
        if (z > 0)
            return fail(p, AS_ERR_ELEMENT, (long)p->pos,
                        "'%s' is not in the organic subset; write it in brackets, e.g. [Hg]",
                        tok);
        return fail(p, AS_ERR_SYNTAX, (long)p->pos, "unexpected character '%s'", tok);
    }
    }
    p->pos += used;
    return AS_OK;
}

static int read_number(parser *p, int max_digits, int *value)
{
    int v = 0, n = 0;
    while (p->pos < p->len && isdigit((unsigned char)p->s[p->pos]) && n < max_digits) {
        v = v * 10 + (p->s[p->pos] - '0');
        p->pos++;
        n++;
    }
    *value = v;
    return n;
}

/* Reads "[...]" starting at '['. */
static as_status read_bracket(parser *p, atom_spec *a)
{
    long open = (long)p->pos;
    memset(a, 0, sizeof *a);
    a->bracket = 1;
    a->isotope = -1;
    a->hcount = 0;
    p->pos++; /* '[' */
    int v;
    if (read_number(p, 6, &v) > 0) {
        if (v > 9999)
            return fail(p, AS_ERR_SYNTAX, open + 1, "isotope mass number too large%s", "");
        a->isotope = v;
    }
    if (p->pos >= p->len || p->s[p->pos] == ']')
        return fail(p, AS_ERR_SYNTAX, (long)p->pos,
                    "empty bracket atom: an element symbol is needed after '['%s", "");
    /* symbol */
    const char *s = p->s + p->pos;
    size_t left = p->len - p->pos;
    long sym_off = (long)p->pos;
    if (s[0] == '*') {
        a->elem = 0;
        p->pos++;
    } else if (islower((unsigned char)s[0])) {
        static const struct { const char *sym; int z; } arom[] = {
            {"se", 34}, {"as", 33}, {"te", 52}, {"b", 5}, {"c", 6}, {"n", 7},
            {"o", 8},   {"p", 15},  {"s", 16},
        };
        int found = 0;
        for (size_t i = 0; i < sizeof arom / sizeof arom[0]; i++) {
            size_t l = strlen(arom[i].sym);
            if (left >= l && memcmp(s, arom[i].sym, l) == 0) {
                a->elem = arom[i].z;
                a->aromatic = 1;
                p->pos += l;
                found = 1;
                break;
            }
        }
        if (!found) {
            char tok[3] = {s[0], left > 1 && islower((unsigned char)s[1]) ? s[1] : 0, 0};
            return fail(p, AS_ERR_ELEMENT, sym_off, "'%s' is not an aromatic element symbol",
                        tok);
        }
    } else if (isupper((unsigned char)s[0])) {
        char tok[3] = {s[0], 0, 0};
        int z = -1;
        if (left > 1 && islower((unsigned char)s[1])) {
            tok[1] = s[1];
            z = as_element_number(tok, 2);
            if (z < 0)
                tok[1] = 0;
        }
        if (z < 0)
            z = as_element_number(tok, 1);
        if (z < 0) {
            if (left > 1 && islower((unsigned char)s[1]))
                tok[1] = s[1];
            return fail(p, AS_ERR_ELEMENT, sym_off, "unknown element symbol '%s'", tok);
        }
        a->elem = z;
        p->pos += strlen(tok);
    } else {
        char tok[2] = {s[0], 0};
        return fail(p, AS_ERR_SYNTAX, sym_off,
                    "expected an element symbol inside brackets, found '%s'",
                    isprint((unsigned char)s[0]) ? tok : "?");
    }
    /* chirality */
    if (p->pos < p->len && p->s[p->pos] == '@') {
        long at = (long)p->pos;
        p->pos++;
        a->chiral = AS_CCW;
        if (p->pos < p->len && p->s[p->pos] == '@') {
            a->chiral = AS_CW;
            p->pos++;
        } else if (p->pos + 1 < p->len && p->s[p->pos] == 'T' && p->s[p->pos + 1] == 'H') {
            p->pos += 2;
            int cls = 0;
            if (read_number(p, 1, &cls) != 1 || cls < 1 || cls > 2)
                return fail(p, AS_ERR_SYNTAX, at, "@TH must be followed by 1 or 2%s", "");
            a->chiral = cls == 1 ? AS_CCW : AS_CW;
        } else if (p->pos + 1 < p->len &&
                   ((p->s[p->pos] == 'A' && p->s[p->pos + 1] == 'L') ||
                    (p->s[p->pos] == 'S' && p->s[p->pos + 1] == 'P') ||
                    (p->s[p->pos] == 'T' && p->s[p->pos + 1] == 'B') ||
                    (p->s[p->pos] == 'O' && p->s[p->pos + 1] == 'H'))) {
            char cls[3] = {p->s[p->pos], p->s[p->pos + 1], 0};
            return fail(p, AS_ERR_UNSUPPORTED, at,
                        "unsupported chirality class @%s (only tetrahedral @ and @@ are read)",
                        cls);
        }
    }
    /* hydrogen count */
    if (p->pos < p->len && p->s[p->pos] == 'H') {
        long hoff = (long)p->pos;
        p->pos++;
        int n = 1;
        if (read_number(p, 2, &v) > 0)
            n = v;
        if (a->elem == 1)
            return fail(p, AS_ERR_SYNTAX, hoff,
                        "a hydrogen atom cannot carry an H count; write [H][H] or [H2]%s", "");
        a->hcount = n;
    }
    /* charge */
    if (p->pos < p->len && (p->s[p->pos] == '+' || p->s[p->pos] == '-')) {
        long coff = (long)p->pos;
        char sign = p->s[p->pos++];
        int mag = 1;
        if (read_number(p, 3, &v) > 0) {
            mag = v;
        } else {
            while (p->pos < p->len && p->s[p->pos] == sign) {
                mag++;
                p->pos++;
            }
        }
        if (mag > 15)
            return fail(p, AS_ERR_CHARGE, coff, "charge %s is outside the range -15..+15",
                        sign == '+' ? "+" : "-");
        a->charge = sign == '+' ? mag : -mag;
    }
    /* atom class */
    if (p->pos < p->len && p->s[p->pos] == ':') {
        long coff = (long)p->pos;
        p->pos++;
        if (read_number(p, 9, &v) == 0)
            return fail(p, AS_ERR_SYNTAX, coff, "':' in a bracket atom needs a class number%s",
                        "");
        a->mapnum = v;
    }
    if (p->pos >= p->len)
        return fail(p, AS_ERR_SYNTAX, open, "bracket atom opened here is never closed with ']'%s",
                    "");
    if (p->s[p->pos] != ']') {
        char c = p->s[p->pos];
        char tok[2] = {c, 0};
        const char *why = "unexpected '%s' inside a bracket atom; the order is "
                          "[isotope]symbol[@][H count][charge][:class]";
        if (c == 'H')
            why = "H count after the charge: write the H count first, e.g. [CH3-] (found '%s')";
        else if (c == ' ' || c == '\t')
            return fail(p, AS_ERR_SYNTAX, (long)p->pos, "white space inside a bracket atom%s",
                        "");
        return fail(p, AS_ERR_SYNTAX, (long)p->pos, why, isprint((unsigned char)c) ? tok : "?");
    }
    p->pos++;
    return AS_OK;
}

/* ---------------------------------------------------------------- bonds */

static int bond_order_of(char c)
{
    switch (c) {
    case '-': return AS_BOND_SINGLE;
    case '=': return AS_BOND_DOUBLE;
    case '#': return AS_BOND_TRIPLE;
    case '$': return AS_BOND_QUADRUPLE;
    case ':': return AS_BOND_AROMATIC;
    case '/':
    case '\\': return AS_BOND_SINGLE;
    default: return 0;
    }
}

/* Adds bond a-b; order 0 = unspecified (single, or aromatic between aromatic atoms). */
static as_status make_bond(parser *p, int a, int b, int order, char dir, int dir_from,
                           long dir_off, long offset)
{
    if (order <= 0)
        order = (p->m->atoms[a].aromatic && p->m->atoms[b].aromatic) ? AS_BOND_AROMATIC
                                                                      : AS_BOND_SINGLE;
    if (p->m->atoms[a].degree >= AS_MAX_DEGREE || p->m->atoms[b].degree >= AS_MAX_DEGREE)
        return fail(p, AS_ERR_LIMIT, offset, "more than 12 bonds on one atom%s", "");
    int k = as_mol_add_bond(p->m, a, b, order);
    if (k < 0)
        return fail(p, AS_ERR_NOMEM, offset, "out of memory%s", "");
    if (grow_side(p))
        return fail(p, AS_ERR_NOMEM, offset, "out of memory%s", "");
    p->bond_dir[k] = dir;
    p->bond_dir_from[k] = dir_from;
    p->bond_dir_off[k] = dir_off;
    return AS_OK;
}

/* ---------------------------------------------------------------- stereo conversion */

/* A three-coordinate centre without H (amine N, phosphine P, sulfonium S) written with
 * exactly one ring-closure digit and only single bonds is read with one more swap: the
 * convention RDKit follows (and therefore most SMILES in circulation), kept here so that a
 * bridgehead amine such as Tröger's base means the same to both. The writer applies the same
 * rule, so our own output reads back unchanged. */
static int lone_pair_flip(const as_mol *m, int a, int nclosures)
{
    if (nclosures != 1 || m->atoms[a].degree != 3)
        return 0;
    for (int k = 0; k < m->atoms[a].degree; k++) {
        int o = m->bonds[m->atoms[a].nbond[k]].order;
        if (o != AS_BOND_SINGLE)
            return 0;
    }
    return 1;
}

static as_status build_tetra(parser *p)
{
    for (int i = 0; i < p->m->natoms; i++) {
        if (!p->chiral[i])
            continue;
        written_order *o = &p->order[i];
        int items[AS_MAX_DEGREE + 1], n = 0;
        for (int k = 0; k < o->n; k++)
            items[n++] = o->item[k];
        int hs = 0;
        for (int k = 0; k < n; k++)
            hs += items[k] == AS_IMPLICIT_H;
        if (n == 3 && hs == 0) {
            /* Lone pair (sulfoxide, phosphine, amine): it takes the second place, right
             * after the atom we came from or, when the atom opens the SMILES, after its
             * first written neighbour (the reading RDKit and most toolkits share). */
            int pos = 1;
            memmove(&items[pos + 1], &items[pos], (size_t)(n - pos) * sizeof(int));
            items[pos] = AS_IMPLICIT_H;
            n = 4;
            if (lone_pair_flip(p->m, i, o->nclosures))
                p->chiral[i] = (char)(p->chiral[i] == AS_CCW ? AS_CW : AS_CCW);
        }
        if (n != 4 || hs > 1)
            continue; /* not a tetrahedral centre; the mark carries no meaning */
        as_tetra t;
        t.center = i;
        memcpy(t.nbr, items, sizeof t.nbr);
        t.parity = p->chiral[i];
        if (as_mol_add_tetra(p->m, &t) < 0)
            return fail(p, AS_ERR_NOMEM, -1, "out of memory%s", "");
    }
    return AS_OK;
}

/* Side (+1 up, -1 down) of neighbour x relative to double-bond atom u along bond k. */
static int mark_side(const parser *p, int k, int u)
{
    char d = p->bond_dir[k];
    int from = p->bond_dir_from[k];
    int up = d == '/' ? 1 : -1;
    return from == u ? up : -up;
}

static as_status build_dbstereo(parser *p)
{
    as_mol *m = p->m;
    for (int k = 0; k < m->nbonds; k++) {
        const as_bond *b = &m->bonds[k];
        if (b->order != AS_BOND_DOUBLE)
            continue;
        int ends[2] = {b->a, b->b}, ref[2] = {-1, -1}, side[2] = {0, 0};
        long conflict = -1;
        for (int e = 0; e < 2; e++) {
            const as_atom *u = &m->atoms[ends[e]];
            for (int j = 0; j < u->degree; j++) {
                int bk = u->nbond[j];
                if (bk == k || !p->bond_dir[bk])
                    continue;
                int s = mark_side(p, bk, ends[e]);
                if (ref[e] < 0) {
                    ref[e] = u->nbr[j];
                    side[e] = s;
                } else if (s == side[e] && conflict < 0) {
                    conflict = p->bond_dir_off[bk];
                }
            }
        }
        if (ref[0] < 0 || ref[1] < 0)
            continue; /* one side unmarked: no geometry (marks may serve another bond) */
        if (conflict >= 0)
            return fail(p, AS_ERR_STEREO, conflict,
                        "conflicting / \\ marks: two neighbours on the same side of one "
                        "double-bond atom%s",
                        "");
        as_dbstereo d = {k, ref[0], ref[1], side[0] == side[1]};
        if (as_mol_add_dbstereo(m, &d) < 0)
            return fail(p, AS_ERR_NOMEM, -1, "out of memory%s", "");
    }
    return AS_OK;
}

/* ---------------------------------------------------------------- main loop */

void as_smiles_opts_init(as_smiles_opts *o)
{
    o->keep_title = 1;
    o->strict_title = 0;
}


static as_status parse_body(parser *p)
{
    as_mol *m = p->m;
    int prev = -1;           /* atom a following atom bonds to */
    int pending_order = 0;   /* bond symbol waiting for its second atom */
    char pending_dir = 0;
    long pending_off = -1;
    int after_dot = 0;       /* a '.' was just read */
    long dot_off = -1;
    int branch_empty = 0;    /* '(' just read */

    while (p->pos < p->len && !is_space(p->s[p->pos])) {
        char c = p->s[p->pos];
        long off = (long)p->pos;
        if (c == '\0')
            return fail(p, AS_ERR_ENCODING, off, "NUL byte in the SMILES%s", "");
        if ((unsigned char)c < 0x20 || c == 0x7f) {
            char tok[8];
            snprintf(tok, sizeof tok, "0x%02x", (unsigned char)c);
            return fail(p, AS_ERR_ENCODING, off, "control byte %s in the SMILES", tok);
        }
        if ((unsigned char)c >= 0x80)
            return fail(p, AS_ERR_ENCODING, off,
                        "non-ASCII byte in the SMILES (only ASCII is valid)%s", "");
        if (c == '[' || isalpha((unsigned char)c) || c == '*') {
            atom_spec a;
            as_status st = c == '[' ? read_bracket(p, &a) : read_organic(p, &a);
            if (st != AS_OK)
                return st;
            if (m->natoms >= AS_SMILES_MAX_ATOMS)
                return fail(p, AS_ERR_LIMIT, off, "more atoms than the limit of 200000%s", "");
            int idx = as_mol_add_atom(m, a.elem);
            if (idx < 0 || grow_side(p))
                return fail(p, AS_ERR_NOMEM, off, "out of memory%s", "");
            as_atom *at = &m->atoms[idx];
            at->aromatic = a.aromatic;
            at->isotope = a.isotope;
            at->hcount = a.hcount;
            at->charge = a.charge;
            at->mapnum = a.mapnum;
            at->bracket = a.bracket;
            at->src_offset = (int)off;
            p->order[idx].n = 0;
            p->order[idx].nclosures = 0;
            p->order[idx].has_from = prev >= 0;
            p->chiral[idx] = (char)a.chiral;
            if (prev >= 0) {
                order_push(p, idx, prev);
                st = make_bond(p, prev, idx, pending_order, pending_dir, prev, pending_off, off);
                if (st != AS_OK)
                    return st;
                order_push(p, prev, idx);
            }
            if (a.bracket && a.hcount == 1)
                order_push(p, idx, AS_IMPLICIT_H);
            prev = idx;
            pending_order = 0;
            pending_dir = 0;
            after_dot = 0;
            branch_empty = 0;
            continue;
        }
        if (bond_order_of(c)) {
            if (pending_order)
                return as_error_set(p->err, AS_ERR_SYNTAX, off, -1,
                                    "two bond symbols in a row ('%c')", c);
            if (prev < 0)
                return as_error_set(p->err, AS_ERR_SYNTAX, off, -1,
                                    "bond '%c' has no atom before it", c);
            pending_dir = (c == '/' || c == '\\') ? c : 0;
            /* a / \\ mark leaves the order open: single, or aromatic between aromatic atoms */
            pending_order = pending_dir ? -1 : bond_order_of(c);
            pending_off = off;
            p->pos++;
            continue;
        }
        if (isdigit((unsigned char)c) || c == '%') {
            int num;
            if (c == '%') {
                if (p->pos + 2 >= p->len || !isdigit((unsigned char)p->s[p->pos + 1]) ||
                    !isdigit((unsigned char)p->s[p->pos + 2]))
                    return fail(p, AS_ERR_SYNTAX, off,
                                "'%%' must be followed by exactly two digits%s", "");
                num = (p->s[p->pos + 1] - '0') * 10 + (p->s[p->pos + 2] - '0');
                p->pos += 3;
            } else {
                num = c - '0';
                p->pos++;
            }
            if (after_dot)
                return fail(p, AS_ERR_SYNTAX, off, "a ring bond cannot follow '.'%s", "");
            if (prev < 0)
                return fail(p, AS_ERR_SYNTAX, off, "ring bond number with no atom before it%s",
                            "");
            ring_open *r = ring_slot(p, num);
            if (r->atom < 0) {
                r->atom = prev;
                r->order = pending_order;
                r->dir = pending_dir;
                r->offset = off;
                r->bond_off = pending_off;
                r->slot = p->order[prev].n;
                order_push(p, prev, -2 - num);
                p->order[prev].nclosures++;
                p->open_rings++;
            } else {
                int a = r->atom;
                if (a == prev)
                    return fail(p, AS_ERR_RING, off,
                                "ring bond closes on the atom that opened it (self bond)%s", "");
                if (as_mol_bond_between(m, a, prev) >= 0)
                    return fail(p, AS_ERR_RING, off,
                                "ring bond duplicates a bond that already joins these atoms%s",
                                "");
                int order = r->order > 0 ? r->order : 0, o2 = pending_order > 0 ? pending_order : 0;
                /* a / \\ mark stands for a single (or aromatic) bond */
                int o1x = r->order < 0 ? AS_BOND_SINGLE : order, o2x = pending_order < 0 ? AS_BOND_SINGLE : o2;
                if ((r->order < 0 && o2 > AS_BOND_SINGLE && o2 != AS_BOND_AROMATIC) ||
                    (pending_order < 0 && order > AS_BOND_SINGLE && order != AS_BOND_AROMATIC))
                    o1x = -1;
                (void)o2x;
                if ((order && o2 && order != o2) || o1x < 0)
                    return fail(p, AS_ERR_RING, pending_off >= 0 ? pending_off : off,
                                "the two ends of this ring bond give different bond orders%s",
                                "");
                if (!order)
                    order = o2;
                char dir = 0;
                int dir_from = -1;
                long dir_off = -1;
                if (r->dir && pending_dir) {
                    /* '/' at the opening reads from the opener; at the closure from the
                     * closer: the marks agree when they differ. */
                    if (r->dir == pending_dir)
                        return fail(p, AS_ERR_STEREO, pending_off,
                                    "the / \\ marks at the two ends of this ring bond "
                                    "disagree%s",
                                    "");
                }
                if (r->dir) {
                    dir = r->dir;
                    dir_from = a;
                    dir_off = r->bond_off;
                } else if (pending_dir) {
                    dir = pending_dir;
                    dir_from = prev;
                    dir_off = pending_off;
                }
                as_status st = make_bond(p, a, prev, order, dir, dir_from, dir_off, off);
                if (st != AS_OK)
                    return st;
                p->order[a].item[r->slot] = prev;
                order_push(p, prev, a);
                p->order[prev].nclosures++;
                r->atom = -1;
                p->open_rings--;
            }
            pending_order = 0;
            pending_dir = 0;
            continue;
        }
        if (c == '(') {
            if (prev < 0 || branch_empty)
                return fail(p, AS_ERR_BRANCH, off, "branch '(' with no atom before it%s", "");
            if (pending_order)
                return fail(p, AS_ERR_SYNTAX, pending_off, "bond symbol before '('%s", "");
            if (p->depth >= p->cap_depth) {
                int n = p->cap_depth ? p->cap_depth * 2 : 32;
                branch_frame *f = realloc(p->stack, (size_t)n * sizeof *f);
                if (!f)
                    return fail(p, AS_ERR_NOMEM, off, "out of memory%s", "");
                p->stack = f;
                p->cap_depth = n;
            }
            p->stack[p->depth].atom = prev;
            p->stack[p->depth].offset = off;
            p->depth++;
            branch_empty = 1;
            p->pos++;
            continue;
        }
        if (c == ')') {
            if (p->depth == 0)
                return fail(p, AS_ERR_BRANCH, off, "')' without a matching '('%s", "");
            if (pending_order)
                return fail(p, AS_ERR_SYNTAX, pending_off,
                            "bond symbol with no atom after it (before ')')%s", "");
            if (branch_empty)
                return fail(p, AS_ERR_BRANCH, off, "empty branch '()'%s", "");
            if (after_dot)
                return fail(p, AS_ERR_SYNTAX, dot_off, "'.' with no atom after it%s", "");
            p->depth--;
            prev = p->stack[p->depth].atom;
            p->pos++;
            continue;
        }
        if (c == '.') {
            if (pending_order)
                return fail(p, AS_ERR_SYNTAX, pending_off, "bond symbol before '.'%s", "");
            if (prev < 0 || after_dot || branch_empty)
                return fail(p, AS_ERR_SYNTAX, off, "'.' with no atom before it%s", "");
            prev = -1;
            after_dot = 1;
            dot_off = off;
            p->pos++;
            continue;
        }
        if (c == '>')
            return fail(p, AS_ERR_SYNTAX, off,
                        "'>' separates reaction roles; read reaction SMILES as a reaction%s", "");
        char tok[2] = {c, 0};
        return fail(p, AS_ERR_SYNTAX, off, "unexpected character '%s'",
                    isprint((unsigned char)c) ? tok : "?");
    }
    if (pending_order)
        return fail(p, AS_ERR_SYNTAX, pending_off, "bond symbol at the end with no atom after it%s",
                    "");
    if (after_dot)
        return fail(p, AS_ERR_SYNTAX, dot_off, "'.' at the end with no atom after it%s", "");
    if (p->depth > 0)
        return fail(p, AS_ERR_BRANCH, p->stack[p->depth - 1].offset,
                    "branch '(' opened here is never closed%s", "");
    if (p->open_rings > 0) {
        long first = -1;
        int num = -1;
        for (int i = 0; i < N_RING_NUMBERS; i++)
            if (ring_slot(p, i)->atom >= 0 && (first < 0 || p->rings[i].offset < first)) {
                first = p->rings[i].offset;
                num = i;
            }
        char tok[16];
        snprintf(tok, sizeof tok, "%d", num);
        return fail(p, AS_ERR_RING, first, "ring bond %s opened here is never closed", tok);
    }
    return AS_OK;
}

as_status as_smiles_read(const char *text, size_t len, const as_smiles_opts *opts, as_mol **out,
                         as_error *err)
{
    as_smiles_opts defaults;
    if (!opts) {
        as_smiles_opts_init(&defaults);
        opts = &defaults;
    }
    *out = NULL;
    as_error_clear(err);
    if (!text)
        return as_error_set(err, AS_ERR_ARG, -1, -1, "no SMILES given");
    if (len > AS_SMILES_MAX_LEN) {
        /* Measure only the SMILES token: a long title is fine. */
        size_t tok = 0;
        while (tok < len && !is_space(text[tok]))
            tok++;
        if (tok > AS_SMILES_MAX_LEN)
            return as_error_set(err, AS_ERR_LIMIT, AS_SMILES_MAX_LEN, -1,
                                "SMILES longer than the limit of %d bytes", AS_SMILES_MAX_LEN);
    }
    parser p;
    memset(&p, 0, offsetof(parser, rings)); /* rings and the local block need no clearing */
    p.s = text;
    p.len = len;
    p.err = err;
    int max_atoms, max_bonds;
    size_bounds(text, len, &max_atoms, &max_bonds);
    p.m = as_mol_new_sized(max_atoms, max_bonds);
    if (!p.m)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    if (side_alloc(&p, max_atoms > 0 ? max_atoms : 1, max_bonds > 0 ? max_bonds : 1)) {
        as_mol_free(p.m);
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
    as_status st = AS_OK;
    if (len == 0 || is_space(text[0])) {
        st = as_error_set(err, AS_ERR_EMPTY, 0, -1, "empty SMILES");
        goto done;
    }
    st = parse_body(&p);
    if (st == AS_OK)
        st = build_tetra(&p);
    if (st == AS_OK)
        st = build_dbstereo(&p);
    if (st == AS_OK && opts->keep_title && p.pos < len) {
        size_t a = p.pos, b = len;
        while (a < b && is_space(text[a]))
            a++;
        while (b > a && is_space(text[b - 1]))
            b--;
        if (b > a && as_mol_set_title(p.m, text + a, b - a) != AS_OK)
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
done:
    free(p.stack);
    free(p.side_heap);
    if (st != AS_OK) {
        as_mol_free(p.m);
        return st;
    }
    *out = p.m;
    return AS_OK;
}

as_status as_smiles_parse(const char *text, size_t len, as_mol **out, as_error *err)
{
    as_status st = as_smiles_read(text, len, NULL, out, err);
    if (st != AS_OK)
        return st;
    st = as_perceive(*out, AS_PASS_ALL, NULL, err);
    if (st != AS_OK) {
        as_mol_free(*out);
        *out = NULL;
    }
    return st;
}

/* ---------------------------------------------------------------- reactions */

void as_reaction_free(as_reaction *r)
{
    if (!r)
        return;
    for (int i = 0; i < 3; i++)
        as_mol_free(r->role[i]);
    free(r->title);
    free(r);
}

as_status as_reaction_parse(const char *text, size_t len, as_reaction **out, as_error *err)
{
    *out = NULL;
    as_error_clear(err);
    /* The reaction text ends at the first white space outside brackets. */
    size_t end = 0, sep[3];
    int nsep = 0, depth = 0;
    for (end = 0; end < len; end++) {
        char c = text[end];
        if (c == '[')
            depth++;
        else if (c == ']' && depth > 0)
            depth--;
        else if (depth == 0 && is_space(c))
            break;
        else if (depth == 0 && c == '>') {
            if (end > 0 && (text[end - 1] == '-' || text[end - 1] == '<'))
                continue; /* dative bond "->" */
            if (nsep == 2)
                return as_error_set(err, AS_ERR_REACTION, (long)end, -1,
                                    "a reaction SMILES has exactly two '>'; found a third here");
            sep[nsep++] = end;
        }
    }
    if (nsep != 2)
        return as_error_set(err, AS_ERR_REACTION, nsep ? (long)sep[nsep - 1] : (long)end, -1,
                            "a reaction SMILES needs two '>' (reactants>agents>products); "
                            "found %d",
                            nsep);
    as_reaction *r = calloc(1, sizeof *r);
    if (!r)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    size_t starts[3] = {0, sep[0] + 1, sep[1] + 1};
    size_t ends[3] = {sep[0], sep[1], end};
    for (int i = 0; i < 3; i++) {
        size_t a = starts[i], b = ends[i];
        if (a == b) {
            r->role[i] = as_mol_new();
            if (!r->role[i]) {
                as_reaction_free(r);
                return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            }
            continue;
        }
        as_smiles_opts o;
        as_smiles_opts_init(&o);
        o.keep_title = 0;
        as_status st = as_smiles_read(text + a, b - a, &o, &r->role[i], err);
        if (st == AS_OK)
            st = as_perceive(r->role[i], AS_PASS_ALL, NULL, err);
        if (st != AS_OK) {
            if (err && err->offset >= 0)
                err->offset += (long)a;
            as_reaction_free(r);
            return st;
        }
    }
    /* Rest of the line: an optional CXSMILES block |...| then a title. */
    size_t a = end;
    while (a < len && is_space(text[a]))
        a++;
    if (a < len && text[a] == '|') {
        size_t b = a + 1;
        while (b < len && text[b] != '|')
            b++;
        if (b < len) {
            r->cx_stripped = 1;
            a = b + 1;
            while (a < len && is_space(text[a]))
                a++;
        }
    }
    size_t b = len;
    while (b > a && is_space(text[b - 1]))
        b--;
    if (b > a) {
        r->title = malloc(b - a + 1);
        if (!r->title) {
            as_reaction_free(r);
            return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        }
        memcpy(r->title, text + a, b - a);
        r->title[b - a] = '\0';
    }
    *out = r;
    return AS_OK;
}
