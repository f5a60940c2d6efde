/* canon.c — canonical atom ranking and the SMILES writer.
 * Owns: CANON/CANGEN-style ranking (Weininger, Weininger & Weininger, J. Chem. Inf. Comput.
 * Sci. 1989, 29, 97: invariant classes refined by neighbour ranks, ties broken one atom at a
 * time), which stereo marks are real, and writing SMILES with @/@@ and / \.
 * Must not: depend on the rule table.
 *
 * Symmetric molecules with stereo: after refinement, atoms in one class may still differ by
 * configuration (meso forms). Breaking the tie one way or the other then yields mirror-image
 * strings, so when the molecule has stereo marks every tie-break choice is explored and the
 * lexicographically smallest string is kept (bounded by MAX_LEAVES; past that the first
 * choices are taken, which stays deterministic but may depend on input order). */
#include "addsite/canon.h"
#include "addsite/perceive.h"
#include "addsite/smiles.h"
#include "status_int.h"

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MAX_LEAVES 256

/* ---------------------------------------------------------------- growable string */

typedef struct sbuf {
    char *s;
    size_t n, cap;
    int oom;
} sbuf;

static void sb_putn(sbuf *b, const char *t, size_t n)
{
    if (b->oom)
        return;
    if (b->n + n + 1 > b->cap) {
        size_t c = b->cap ? b->cap * 2 : 128;
        while (c < b->n + n + 1)
            c *= 2;
        char *p = realloc(b->s, c);
        if (!p) {
            b->oom = 1;
            return;
        }
        b->s = p;
        b->cap = c;
    }
    if (n <= 4) {
        /* atom symbols and bond characters: a call to memcpy costs more than the copy */
        for (size_t i = 0; i < n; i++)
            b->s[b->n + i] = t[i];
    } else {
        memcpy(b->s + b->n, t, n);
    }
    b->n += n;
    b->s[b->n] = '\0';
}

static void sb_puts(sbuf *b, const char *t)
{
    size_t n = 0;
    while (t[n])
        n++;
    sb_putn(b, t, n);
}

static void sb_putc(sbuf *b, char c)
{
    sb_putn(b, &c, 1);
}

static void sb_int(sbuf *b, long v)
{
    char t[24];
    int n = snprintf(t, sizeof t, "%ld", v);
    sb_putn(b, t, (size_t)n);
}

/* ---------------------------------------------------------------- ranking */

typedef struct ringbond {
    int opener, closer, bond;
    int digit;
} ringbond;

typedef struct canon_ctx {
    const as_mol *m;
    const as_canon_opts *o;
    int n;
    void *block;       /* the one allocation holding every array below (NULL when the
                          caller's buffer held them) */
    int *rank;         /* the ranking being tie-broken (canon_connected) */
    int *cls;          /* constitutional classes (refined, no tie breaking) */
    char *real_tetra;  /* per tetra record */
    char *real_db;     /* per dbs record */
    int has_stereo;
    char *near_stereo; /* per atom: a real stereo element's atom or its neighbour */
    /* refinement scratch */
    int *order;
    int *tmp;
    int *scratch;      /* 11 n ints for refine() */
    int *wblock;       /* writer scratch, reused by every complete ordering */
    ringbond *wrb;     /* ring bonds, one per bond at most */
    signed char *wdir; /* bond marks */
    /* best string so far */
    char *best;
    size_t best_len;
    int leaves;
    as_status st;
    /* refine()'s cell arrays in scratch still describe the partition it last wrote (with
     * its counters zero): a refinement that starts from there may skip the set-up */
    int part_ok;
    int part_cells; /* number of cells of that partition */
} canon_ctx;

static int bond_code(const as_bond *b)
{
    return b->aromatic ? 4 : b->order;
}

/* Sorts v[0..n) ascending by key[v[i]] (insertion sort for short runs, else merge sort
 * through tmp). */
static void sort_by_key(int *v, int n, const int *key, int *tmp)
{
    if (n < 24) {
        for (int i = 1; i < n; i++) {
            int x = v[i], j = i - 1;
            while (j >= 0 && key[v[j]] > key[x]) {
                v[j + 1] = v[j];
                j--;
            }
            v[j + 1] = x;
        }
        return;
    }
    for (int w = 1; w < n; w *= 2) {
        for (int lo = 0; lo < n; lo += 2 * w) {
            int mid = lo + w < n ? lo + w : n, hi = lo + 2 * w < n ? lo + 2 * w : n;
            int i = lo, j = mid, k = lo;
            while (i < mid && j < hi)
                tmp[k++] = key[v[j]] < key[v[i]] ? v[j++] : v[i++];
            while (i < mid)
                tmp[k++] = v[i++];
            while (j < hi)
                tmp[k++] = v[j++];
        }
        memcpy(v, tmp, (size_t)n * sizeof(int));
    }
}

/* Refines the ordered partition given by rank[] (rank = number of atoms in lower cells, i.e.
 * the start of the atom's cell) to the coarsest equitable partition: atoms of one cell then
 * have the same number of neighbours, per bond code, in every cell. Splitter cells are taken
 * from a FIFO queue and only the atoms they touch move (Hopcroft's trick: a split cell that
 * is not queued enqueues all its fragments but the largest), so a 100,000-atom chain takes
 * O(m log n), not one full pass per bond of the chain. Fragments are ordered by their
 * neighbour counts, so the result depends only on the input partition, never on atom
 * numbering. */
/* The cell arrays refine() works on, in c->scratch (11 n ints). */
typedef struct cells {
    int *elems, *pos, *cell_of, *cell_len, *cnt, *tcount, *touched, *tcells, *queue, *inq, *tmp;
} cells;

static cells cells_of(const canon_ctx *c)
{
    int n = c->n, *p = c->scratch;
    cells x = {p,         p + n,     p + 2 * n, p + 3 * n, p + 4 * n, p + 5 * n,
               p + 6 * n, p + 7 * n, p + 8 * n, p + 9 * n, p + 10 * n};
    return x;
}

/* prepared: the caller has set c->scratch's cell arrays (elems, pos, cell_of, cell_len) to
 * rank, with cnt, tcount and inq zero and c->part_cells cells; else they are built here. */
static void refine(canon_ctx *c, int *rank, int seed, int prepared)
{
    const as_mol *m = c->m;
    int n = c->n;
    if (n == 0)
        return;
    cells cs = cells_of(c);
    int *elems = cs.elems, *pos = cs.pos, *cell_of = cs.cell_of, *cell_len = cs.cell_len;
    int *cnt = cs.cnt, *tcount = cs.tcount, *touched = cs.touched, *tcells = cs.tcells;
    int *queue = cs.queue, *inq = cs.inq, *tmp = cs.tmp;
    int ncells = 0;
    if (prepared) {
        ncells = c->part_cells;
    } else {
        /* counting sort of atoms by rank: cells are contiguous, starting at their rank */
        memset(cell_len, 0, (size_t)n * sizeof(int));
        for (int v = 0; v < n; v++)
            cell_len[rank[v]]++;
        memcpy(tcount, cell_len, (size_t)n * sizeof(int)); /* fill cursor, reset below */
        for (int v = 0; v < n; v++) {
            int s = rank[v];
            int k = s + cell_len[s] - tcount[s]--;
            elems[k] = v;
            pos[v] = k;
            cell_of[v] = s;
        }
        memset(cnt, 0, (size_t)n * sizeof(int));
        memset(tcount, 0, (size_t)n * sizeof(int));
        memset(inq, 0, (size_t)n * sizeof(int));
        for (int s = 0; s < n; s += cell_len[s])
            ncells++;
    }
    int qhead = 0, qlen = 0;
    if (seed < 0) {
        /* every cell but the (first) largest: atoms of a cell share their per-code neighbour
         * counts (part of the initial invariant), so counts into the largest cell follow from
         * the others (Hopcroft) */
        int largest = 0;
        for (int s = 0; s < n; s += cell_len[s])
            if (cell_len[s] > cell_len[largest])
                largest = s;
        for (int s = 0; s < n; s += cell_len[s]) {
            if (s == largest)
                continue;
            queue[qlen++] = s; /* qhead is 0 here */
            inq[s] = 1;
        }
    } else {
        /* the partition was equitable before one atom of cell `seed` was set apart: only
         * the singleton and the rest of its old cell can split anything now */
        queue[qlen++] = seed;
        inq[seed] = 1;
        if (seed + 1 < n && !inq[seed + 1] && cell_len[seed] == 1) {
            queue[qlen++] = seed + 1;
            inq[seed + 1] = 1;
        }
    }
    /* a discrete partition (every cell one atom) is equitable: the rest of the queue has
     * nothing left to split */
    while (qlen && ncells < n) {
        int w = queue[qhead];
        if (++qhead == n) /* a ring of n: no cell is queued twice */
            qhead = 0;
        qlen--;
        inq[w] = 0;
        int nt = 0, ntc = 0;
        int wlen = cell_len[w];
        for (int k = w; k < w + wlen; k++) {
            const as_atom *a = &m->atoms[elems[k]];
            for (int j = 0; j < a->degree; j++) {
                int u = a->nbr[j];
                if (cell_len[cell_of[u]] == 1)
                    continue; /* a single atom cannot split */
                int code = bond_code(&m->bonds[a->nbond[j]]);
                if (cnt[u] == 0) {
                    /* first touch: move u to the tail of its cell */
                    int x = cell_of[u];
                    if (tcount[x] == 0)
                        tcells[ntc++] = x;
                    int target = x + cell_len[x] - 1 - tcount[x]++;
                    int other = elems[target];
                    elems[pos[u]] = other;
                    pos[other] = pos[u];
                    elems[target] = u;
                    pos[u] = target;
                    touched[nt++] = u;
                }
                cnt[u] += 1 << (4 * (code - 1));
            }
        }
        /* split touched cells, lowest start first */
        for (int i = 1; i < ntc; i++) {
            int x = tcells[i], j = i - 1;
            while (j >= 0 && tcells[j] > x) {
                tcells[j + 1] = tcells[j];
                j--;
            }
            tcells[j + 1] = x;
        }
        for (int i = 0; i < ntc; i++) {
            int x = tcells[i], len = cell_len[x], t = tcount[x];
            int tail = x + len - t;
            if (t == 1) {
                /* the common case: one atom of the cell touched (never a single-atom cell,
                 * those are skipped). It splits off last; the rest keeps the start and is
                 * the larger or equal part, so only the new singleton is queued. */
                int u = elems[tail];
                cell_len[x] = len - 1;
                cell_len[tail] = 1;
                cell_of[u] = tail;
                ncells++;
                if (!inq[tail]) {
                    int qt = qhead + qlen++;
                    queue[qt < n ? qt : qt - n] = tail;
                    inq[tail] = 1;
                }
                continue;
            }
            if (t == len) {
                /* the whole cell touched alike: no split */
                int k = x + 1;
                while (k < x + len && cnt[elems[k]] == cnt[elems[x]])
                    k++;
                if (k == x + len)
                    continue;
            }
            sort_by_key(elems + tail, t, cnt, tmp);
            for (int k = tail; k < x + len; k++)
                pos[elems[k]] = k;
            /* fragment boundaries */
            int nfrag = 0, largest = -1, largest_len = -1;
            int starts[2];
            (void)starts;
            int fs = x;
            int first_touched_frag = t == len ? x : tail;
            if (t < len)
                nfrag = 1;
            int was_queued = inq[x];
            /* walk fragments */
            int k = first_touched_frag;
            while (k < x + len) {
                int e = k + 1;
                while (e < x + len && cnt[elems[e]] == cnt[elems[k]])
                    e++;
                nfrag++;
                k = e;
            }
            if (nfrag == 1)
                continue;
            ncells += nfrag - 1;
            /* set cell data and find the largest fragment */
            fs = x;
            while (fs < x + len) {
                int e;
                if (fs < tail) {
                    e = tail;
                } else {
                    e = fs + 1;
                    while (e < x + len && cnt[elems[e]] == cnt[elems[fs]])
                        e++;
                }
                cell_len[fs] = e - fs;
                /* the first fragment keeps the cell's start: its atoms' cell_of stays (with a
                 * large untouched rest, e.g. a symmetric ring, rewriting it made every split
                 * cost the whole cell) */
                for (int q = fs == x ? e : fs; q < e; q++)
                    cell_of[elems[q]] = fs;
                if (e - fs > largest_len) {
                    largest_len = e - fs;
                    largest = fs;
                }
                fs = e;
            }
            for (fs = x; fs < x + len; fs += cell_len[fs]) {
                if (inq[fs])
                    continue;
                if (!was_queued && fs == largest)
                    continue;
                int qt = qhead + qlen++;
                queue[qt < n ? qt : qt - n] = fs;
                inq[fs] = 1;
            }
        }
        for (int i = 0; i < nt; i++) {
            int u = touched[i];
            cnt[u] = 0;
        }
        for (int i = 0; i < ntc; i++)
            tcount[tcells[i]] = 0;
    }
    /* cells left queued at an early stop: the next prepared call expects inq zero */
    for (; qlen; qlen--) {
        inq[queue[qhead]] = 0;
        if (++qhead == n)
            qhead = 0;
    }
    c->part_ok = 1;
    c->part_cells = ncells;
    memcpy(rank, cell_of, (size_t)n * sizeof(int));
}

/* rank[i] = number of atoms whose 128-bit key (inv[2i], inv[2i+1]) is smaller. */
static int key_less(const uint64_t *inv, int y, int x)
{
    return inv[2 * y] < inv[2 * x] || (inv[2 * y] == inv[2 * x] && inv[2 * y + 1] < inv[2 * x + 1]);
}

static void rank_by_keys(canon_ctx *c, const uint64_t *inv, int *rank)
{
    int n = c->n;
    int *a = c->order, *t = c->tmp;
    for (int i = 0; i < n; i++)
        a[i] = i;
    if (n <= 32) {
        /* small molecules (most of them): a stable insertion sort beats the merge passes */
        for (int i = 1; i < n; i++) {
            int x = a[i], j = i - 1;
            while (j >= 0 && key_less(inv, x, a[j])) {
                a[j + 1] = a[j];
                j--;
            }
            a[j + 1] = x;
        }
    }
    for (int w = 1; w < n && n > 32; w *= 2) {
        for (int lo = 0; lo < n; lo += 2 * w) {
            int mid = lo + w < n ? lo + w : n, hi = lo + 2 * w < n ? lo + 2 * w : n;
            int i = lo, j = mid, k = lo;
            while (i < mid && j < hi) {
                int x = a[i], y = a[j];
                int ylt = inv[2 * y] < inv[2 * x] ||
                          (inv[2 * y] == inv[2 * x] && inv[2 * y + 1] < inv[2 * x + 1]);
                t[k++] = ylt ? a[j++] : a[i++];
            }
            while (i < mid)
                t[k++] = a[i++];
            while (j < hi)
                t[k++] = a[j++];
        }
        memcpy(a, t, (size_t)n * sizeof(int));
    }
    for (int i = 0; i < n; i++) {
        int x = a[i];
        if (i > 0 && inv[2 * a[i - 1]] == inv[2 * x] && inv[2 * a[i - 1] + 1] == inv[2 * x + 1])
            rank[x] = rank[a[i - 1]];
        else
            rank[x] = i;
    }
}

/* Initial invariants → ranks: degree, element, isotope, charge, H count, aromaticity, ring
 * size (smallest ring through the atom), then the atom class when maps are written. */
static int initial_ranks(canon_ctx *c, int *rank)
{
    const as_mol *m = c->m;
    int n = c->n;
    uint64_t *inv = (uint64_t *)(void *)c->scratch; /* 11 n ints hold 2 n keys */
    if (n > 0 && n <= 64) {
        /* Most molecules: no isotope and no map number differs between atoms, so the key
         * fits one word next to the atom index (same order as the two-word key below; equal
         * keys stay in atom order) and sorting plain words is cheap. */
        uint64_t *k = inv + 2 * n; /* past the cell arrays refine() is given below */
        int iso0 = m->atoms[0].isotope, map0 = c->o->atom_maps ? m->atoms[0].mapnum : 0;
        int plain = 1;
        for (int i = 0; i < n && plain; i++) {
            const as_atom *a = &m->atoms[i];
            plain = a->isotope == iso0 && (!c->o->atom_maps || a->mapnum == map0);
            uint64_t wdeg = 0;
            for (int j = 0; j < a->degree; j++)
                wdeg += (uint64_t)1 << (4 * (bond_code(&m->bonds[a->nbond[j]]) - 1));
            /* degree (at most AS_MAX_DEGREE, 4 bits), element, charge, H (8 bits each),
             * aromatic (1), ring size (8), per-code neighbour counts (16): 53 bits, then 6
             * bits of atom index */
            uint64_t w = (uint64_t)(a->degree & 0xf) << 49 | (uint64_t)(a->elem & 0xff) << 41 |
                         (uint64_t)((a->charge + 64) & 0xff) << 33 |
                         (uint64_t)(a->total_h & 0xff) << 25 | (uint64_t)(a->aromatic & 1) << 24 |
                         (uint64_t)(a->ring_size & 0xff) << 16 | wdeg;
            k[i] = (w << 6) | (uint64_t)i;
        }
        if (plain) {
            /* counting sort by degree (the top field) first, so the insertion sort below
             * only meets the few inversions inside one degree */
            uint64_t *sorted = k + n;
            int start[17] = {0};
            for (int i = 0; i < n; i++)
                start[(k[i] >> 55) + 1]++;
            for (int d = 1; d < 17; d++)
                start[d] += start[d - 1];
            for (int i = 0; i < n; i++)
                sorted[start[k[i] >> 55]++] = k[i];
            k = sorted;
            for (int i = 1; i < n; i++) {
                uint64_t x = k[i];
                int j = i - 1;
                while (j >= 0 && k[j] > x) {
                    k[j + 1] = k[j];
                    j--;
                }
                k[j + 1] = x;
            }
            /* the sorted order is refine()'s cell arrays already */
            cells cs = cells_of(c);
            memset(cs.cell_len, 0, (size_t)n * sizeof(int));
            int ncells = 0;
            for (int i = 0; i < n; i++) {
                int x = (int)(k[i] & 63);
                int same = i > 0 && (k[i - 1] >> 6) == (k[i] >> 6);
                rank[x] = same ? rank[k[i - 1] & 63] : i;
                ncells += !same;
                cs.elems[i] = x;
                cs.pos[x] = i;
                cs.cell_of[x] = rank[x];
                cs.cell_len[rank[x]]++;
            }
            memset(cs.cnt, 0, (size_t)n * sizeof(int));
            memset(cs.tcount, 0, (size_t)n * sizeof(int));
            memset(cs.inq, 0, (size_t)n * sizeof(int));
            c->part_cells = ncells;
            return 1;
        }
    }
    for (int i = 0; i < n; i++) {
        const as_atom *a = &m->atoms[i];
        uint64_t hi = 0;
        hi |= (uint64_t)(a->degree & 0xff) << 56;
        hi |= (uint64_t)(a->elem & 0xff) << 48;
        hi |= (uint64_t)((a->isotope + 1) & 0xffff) << 32;
        hi |= (uint64_t)((a->charge + 64) & 0xff) << 24;
        hi |= (uint64_t)(a->total_h & 0xff) << 16;
        hi |= (uint64_t)(a->aromatic & 1) << 8;
        hi |= (uint64_t)(a->ring_size & 0xff); /* smallest ring: a graph invariant */
        inv[2 * i] = hi;
        /* neighbour count per bond code, packed as refine() counts them: with it in the
         * invariant, refine() may leave the largest initial cell out of its queue */
        uint64_t wdeg = 0;
        for (int k = 0; k < a->degree; k++)
            wdeg += (uint64_t)1 << (4 * (bond_code(&m->bonds[a->nbond[k]]) - 1));
        inv[2 * i + 1] = (wdeg << 32) | (c->o->atom_maps ? (uint64_t)(unsigned)a->mapnum : 0);
    }
    rank_by_keys(c, inv, rank);
    return 0;
}

/* ---------------------------------------------------------------- real stereo elements */

/* 1 when atoms a and b lie on one common SSSR ring. */
static int share_ring(const as_mol *m, int a, int b)
{
    for (int r = 0; r < m->nrings; r++) {
        int fa = 0, fb = 0;
        for (int k = m->ring_start[r]; k < m->ring_start[r + 1]; k++) {
            fa |= m->ring_atoms[k] == a;
            fb |= m->ring_atoms[k] == b;
        }
        if (fa && fb)
            return 1;
    }
    return 0;
}

static void find_real_stereo(canon_ctx *c)
{
    const as_mol *m = c->m;
    /* pass 1: centres whose four neighbours are all different */
    char *cand_ring = calloc((size_t)(m->ntetra ? m->ntetra : 1), 1);
    if (!cand_ring) {
        c->st = AS_ERR_NOMEM;
        return;
    }
    for (int i = 0; i < m->ntetra; i++) {
        const as_tetra *t = &m->tetra[i];
        int cl[4];
        for (int k = 0; k < 4; k++)
            cl[k] = t->nbr[k] == AS_IMPLICIT_H ? -1 : c->cls[t->nbr[k]];
        int dup = 0, dup_ring = 1;
        for (int x = 0; x < 4; x++)
            for (int y = x + 1; y < 4; y++)
                if (cl[x] == cl[y]) {
                    dup++;
                    /* ring stereo (cis/trans-1,4-disubstituted rings): the two equal
                     * neighbours are ring atoms on a common ring with the centre */
                    if (t->nbr[x] < 0 || t->nbr[y] < 0 || !share_ring(m, t->center, t->nbr[x]) ||
                        !share_ring(m, t->center, t->nbr[y]))
                        dup_ring = 0;
                }
        if (!dup)
            c->real_tetra[i] = 1;
        else if (dup == 1 && dup_ring)
            cand_ring[i] = 1;
    }
    /* pass 2: ring-stereo candidates need a second stereo centre on a shared ring system */
    for (int i = 0; i < m->ntetra; i++) {
        if (!cand_ring[i])
            continue;
        for (int j = 0; j < m->ntetra; j++) {
            if (j == i || !(cand_ring[j] || c->real_tetra[j]))
                continue;
            /* same ring system: a path through ring atoms; approximate by a shared ring or
             * rings sharing atoms */
            int ci = m->tetra[i].center, cj = m->tetra[j].center;
            int found = 0;
            for (int r = 0; r < m->nrings && !found; r++) {
                int fi = 0, fj = 0;
                for (int k = m->ring_start[r]; k < m->ring_start[r + 1]; k++) {
                    fi |= m->ring_atoms[k] == ci;
                    fj |= m->ring_atoms[k] == cj;
                }
                found = fi && fj;
            }
            if (found) {
                c->real_tetra[i] = 1;
                break;
            }
        }
    }
    free(cand_ring);
    for (int i = 0; i < m->ndbs; i++) {
        const as_bond *b = &m->bonds[m->dbs[i].bond];
        int ok = 1;
        for (int e = 0; e < 2 && ok; e++) {
            int u = e ? b->b : b->a, v = e ? b->a : b->b;
            const as_atom *a = &m->atoms[u];
            int others[AS_MAX_DEGREE], no = 0;
            for (int k = 0; k < a->degree; k++)
                if (a->nbr[k] != v)
                    others[no++] = a->nbr[k];
            if (no == 0 || no + a->total_h > 2)
                ok = 0;
            else if (no == 2 && c->cls[others[0]] == c->cls[others[1]])
                ok = 0;
        }
        c->real_db[i] = (char)ok;
    }
    for (int i = 0; i < m->ntetra; i++) {
        if (!c->real_tetra[i])
            continue;
        c->has_stereo = 1;
        int a = m->tetra[i].center;
        c->near_stereo[a] = 1;
        for (int k = 0; k < m->atoms[a].degree; k++)
            c->near_stereo[m->atoms[a].nbr[k]] = 1;
    }
    for (int i = 0; i < m->ndbs; i++) {
        if (!c->real_db[i])
            continue;
        c->has_stereo = 1;
        const as_bond *b = &m->bonds[m->dbs[i].bond];
        for (int e = 0; e < 2; e++) {
            int a = e ? b->b : b->a;
            c->near_stereo[a] = 1;
            for (int k = 0; k < m->atoms[a].degree; k++)
                c->near_stereo[m->atoms[a].nbr[k]] = 1;
        }
    }
}

/* Parity descriptor (1 or 2) of a real centre whose four neighbours all differ in class:
 * the record's parity carried over to the order sorted by class (H lowest); 0 otherwise. */
static int centre_descriptor(const canon_ctx *c, const as_tetra *t)
{
    int key[4], ord[4];
    for (int k = 0; k < 4; k++) {
        key[k] = t->nbr[k] == AS_IMPLICIT_H ? -1 : c->cls[t->nbr[k]];
        ord[k] = k;
    }
    for (int x = 0; x < 4; x++)
        for (int y = x + 1; y < 4; y++)
            if (key[x] == key[y])
                return 0;
    /* parity of the permutation that sorts the keys */
    int odd = 0;
    for (int x = 0; x < 4; x++)
        for (int y = x + 1; y < 4; y++)
            if (key[ord[x]] > key[ord[y]])
                odd ^= 1;
    int par = t->parity == AS_CCW ? 1 : 2;
    return odd ? 3 - par : par;
}

/* Splits classes by configuration: two constitutionally equal centres of opposite
 * configuration (the two ends of ribitol) become different, which in turn makes a
 * pseudo-asymmetric centre between them real. Repeats while that changes anything. */
static void stereo_refine(canon_ctx *c)
{
    const as_mol *m = c->m;
    int n = c->n;
    int *desc = calloc((size_t)(n ? n : 1), sizeof(int));
    int *rank = malloc((size_t)(n ? n : 1) * sizeof(int));
    if (!desc || !rank) {
        free(desc);
        free(rank);
        c->st = AS_ERR_NOMEM;
        return;
    }
    for (int iter = 0; iter < 4; iter++) {
        int any = 0;
        memset(desc, 0, (size_t)n * sizeof(int));
        for (int i = 0; i < m->ntetra; i++) {
            if (!c->real_tetra[i])
                continue;
            desc[m->tetra[i].center] = centre_descriptor(c, &m->tetra[i]);
            any |= desc[m->tetra[i].center] != 0;
        }
        if (!any)
            break;
        /* rank by (class, descriptor), then refine */
        uint64_t *keys = malloc((size_t)n * 2 * sizeof(uint64_t));
        if (!keys) {
            c->st = AS_ERR_NOMEM;
            break;
        }
        for (int i = 0; i < n; i++) {
            keys[2 * i] = (uint64_t)(unsigned)c->cls[i];
            keys[2 * i + 1] = (uint64_t)(unsigned)desc[i];
        }
        rank_by_keys(c, keys, rank);
        free(keys);
        int before = 0, after = 0;
        refine(c, rank, -1, 0);
        /* count classes to see whether anything split */
        char *seen = calloc((size_t)(n ? n : 1), 1);
        if (!seen) {
            c->st = AS_ERR_NOMEM;
            break;
        }
        for (int i = 0; i < n; i++)
            if (!seen[c->cls[i]]) {
                seen[c->cls[i]] = 1;
                before++;
            }
        memset(seen, 0, (size_t)n);
        for (int i = 0; i < n; i++)
            if (!seen[rank[i]]) {
                seen[rank[i]] = 1;
                after++;
            }
        free(seen);
        if (after == before)
            break;
        memcpy(c->cls, rank, (size_t)n * sizeof(int));
        memset(c->real_tetra, 0, (size_t)(m->ntetra ? m->ntetra : 1));
        memset(c->real_db, 0, (size_t)(m->ndbs ? m->ndbs : 1));
        memset(c->near_stereo, 0, (size_t)n);
        c->has_stereo = 0;
        find_real_stereo(c);
        if (c->st != AS_OK)
            break;
    }
    c->part_ok = 0; /* the cell arrays may hold a partition that was not kept */
    free(desc);
    free(rank);
}

/* ---------------------------------------------------------------- writer */

typedef struct writer {
    canon_ctx *c;
    const int *rank;
    int *visited;    /* visit index, -1 unvisited */
    int *parent;
    int *seq;        /* atoms in visit order */
    int nseq;
    ringbond *rb;
    int nrb;
    int *child_start, *children; /* tree children per atom, in visit order */
    signed char *dir; /* per bond: 0 none, +1 '/', -1 '\\' in written direction */
    int *written_first; /* per bond: the atom written first */
    int *ord;           /* per stereo double bond: assign_dirs() order */
    int *stack, *it, *nbuf, *nchild, *byrank, *ci; /* traversal scratch */
    int *pbond;      /* per atom: the bond to its parent, -1 for a root */
    int *nrb_at;     /* per atom: ring bonds opened or closed there */
} writer;

/* Neighbours of a sorted by rank. */
static void sorted_nbrs(const writer *w, int a, int *out)
{
    const as_atom *at = &w->c->m->atoms[a];
    int n = at->degree;
    for (int i = 0; i < n; i++)
        out[i] = at->nbr[i];
    if (n == 2) {
        /* most atoms of a chain or ring */
        if (w->rank[out[0]] > w->rank[out[1]]) {
            out[0] = at->nbr[1];
            out[1] = at->nbr[0];
        }
        return;
    }
    for (int i = 1; i < n; i++) {
        int x = out[i], j = i - 1;
        while (j >= 0 && w->rank[out[j]] > w->rank[x]) {
            out[j + 1] = out[j];
            j--;
        }
        out[j + 1] = x;
    }
}

/* Pass 1: DFS from each component's lowest-ranked atom; tree edges and ring bonds. */
static int build_tree(writer *w)
{
    const as_mol *m = w->c->m;
    int n = w->c->n;
    int *stack = w->stack, *it = w->it, *nb = w->nbuf, *nchild = w->nchild, *byrank = w->byrank;
    memset(nchild, 0, (size_t)n * sizeof(int));
    memset(w->nrb_at, 0, (size_t)n * sizeof(int));
    for (int i = 0; i < n; i++)
        byrank[w->rank[i]] = i;
    for (int i = 0; i < n; i++) {
        w->visited[i] = -1;
        w->parent[i] = -1;
        w->pbond[i] = -1;
    }
    int nvis = 0;
    for (int r = 0; r < n; r++) {
        int s = byrank[r];
        if (w->visited[s] >= 0)
            continue;
        int top = 0;
        stack[top++] = s;
        w->visited[s] = nvis++;
        w->seq[w->nseq++] = s;
        it[s] = 0;
        sorted_nbrs(w, s, nb + (size_t)s * AS_MAX_DEGREE);
        while (top) {
            int u = stack[top - 1];
            const int *un = nb + (size_t)u * AS_MAX_DEGREE;
            if (it[u] >= m->atoms[u].degree) {
                top--;
                continue;
            }
            int v = un[it[u]++];
            if (v == w->parent[u])
                continue;
            if (w->visited[v] < 0) {
                w->visited[v] = nvis++;
                w->seq[w->nseq++] = v;
                w->parent[v] = u;
                w->pbond[v] = as_mol_bond_between(m, u, v);
                nchild[u]++;
                it[v] = 0;
                sorted_nbrs(w, v, nb + (size_t)v * AS_MAX_DEGREE);
                stack[top++] = v;
            } else if (w->visited[v] < w->visited[u]) {
                /* back edge to an ancestor: a ring bond, opened at v, closed at u */
                w->nrb_at[u]++;
                w->nrb_at[v]++;
                int b = as_mol_bond_between(m, u, v);
                w->rb[w->nrb].opener = v;
                w->rb[w->nrb].closer = u;
                w->rb[w->nrb].bond = b;
                w->rb[w->nrb].digit = -1;
                w->nrb++;
            }
        }
    }
    /* children lists in visit order */
    w->child_start[0] = 0;
    for (int i = 0; i < n; i++)
        w->child_start[i + 1] = w->child_start[i] + nchild[i];
    memset(nchild, 0, (size_t)n * sizeof(int));
    for (int k = 0; k < w->nseq; k++) {
        int v = w->seq[k], p = w->parent[v];
        if (p >= 0)
            w->children[w->child_start[p] + nchild[p]++] = v;
    }
    return 0;
}

/* Ring bonds at atom a in the order their digits are written: closures first (by the
 * opener's visit order), then openings (by the closer's visit order). */
static int ring_bonds_at(const writer *w, int a, int *out)
{
    int n = 0;
    if (!w->nrb_at[a])
        return 0;
    for (int pass = 0; pass < 2; pass++) {
        int start = n;
        for (int i = 0; i < w->nrb; i++) {
            const ringbond *r = &w->rb[i];
            if ((pass == 0 && r->closer == a) || (pass == 1 && r->opener == a))
                out[n++] = i;
        }
        for (int i = start + 1; i < n; i++) {
            int x = out[i], j = i - 1;
            int kx = pass == 0 ? w->visited[w->rb[x].opener] : w->visited[w->rb[x].closer];
            while (j >= start) {
                int kj = pass == 0 ? w->visited[w->rb[out[j]].opener]
                                   : w->visited[w->rb[out[j]].closer];
                if (kj <= kx)
                    break;
                out[j + 1] = out[j];
                j--;
            }
            out[j + 1] = x;
        }
    }
    return n;
}

/* Neighbour order of atom a as written: parent, H/lone pair, ring partners, children. */
static int written_nbrs(const writer *w, int a, int *out, int with_h)
{
    int n = 0;
    if (w->parent[a] >= 0)
        out[n++] = w->parent[a];
    int rbs[AS_MAX_DEGREE];
    int nr = ring_bonds_at(w, a, rbs);
    for (int i = 0; i < nr; i++) {
        const ringbond *r = &w->rb[rbs[i]];
        out[n++] = r->opener == a ? r->closer : r->opener;
    }
    for (int k = w->child_start[a]; k < w->child_start[a + 1]; k++)
        out[n++] = w->children[k];
    if (with_h) {
        /* an H goes where it is written (after the parent, else first); a lone pair of a
         * three-coordinate centre always takes the second place (see smiles_read.c) */
        int pos = (w->parent[a] >= 0 || w->c->m->atoms[a].total_h == 0) ? 1 : 0;
        if (pos > n)
            pos = n;
        memmove(out + pos + 1, out + pos, (size_t)(n - pos) * sizeof(int));
        out[pos] = AS_IMPLICIT_H;
        n++;
    }
    return n;
}

/* 1 when the permutation taking p to q (same 4 items) is odd. */
static int odd_perm(const int *p, const int *q)
{
    int idx[4];
    for (int i = 0; i < 4; i++) {
        idx[i] = -1;
        for (int j = 0; j < 4; j++)
            if (q[j] == p[i])
                idx[i] = j;
        if (idx[i] < 0)
            return -1;
    }
    int par = 0;
    for (int i = 0; i < 4; i++)
        for (int j = i + 1; j < 4; j++)
            if (idx[i] > idx[j])
                par ^= 1;
    return par;
}

/* Chirality to write at atom a: 0, AS_CCW or AS_CW. */
static int written_chirality(const writer *w, int a)
{
    const canon_ctx *c = w->c;
    const as_mol *m = c->m;
    if (!c->o->stereo || m->ntetra == 0)
        return 0;
    int ti = as_mol_find_tetra(m, a);
    if (ti < 0 || !c->real_tetra[ti])
        return 0;
    const as_tetra *t = &m->tetra[ti];
    int has_h = 0;
    for (int k = 0; k < 4; k++)
        has_h |= t->nbr[k] == AS_IMPLICIT_H;
    int out[AS_MAX_DEGREE + 1];
    int n = written_nbrs(w, a, out, has_h);
    if (n != 4)
        return 0;
    int odd = odd_perm(t->nbr, out);
    if (odd < 0)
        return 0;
    if (has_h && m->atoms[a].total_h == 0 && m->atoms[a].degree == 3) {
        /* lone-pair centre with one ring-closure digit and only single bonds: the extra swap
         * of the reading convention (see smiles_read.c, lone_pair_flip) */
        int rbs[AS_MAX_DEGREE], single = 1;
        int nr = ring_bonds_at(w, a, rbs);
        for (int k = 0; k < m->atoms[a].degree; k++)
            single &= m->bonds[m->atoms[a].nbond[k]].order == AS_BOND_SINGLE;
        if (nr == 1 && single)
            odd ^= 1;
    }
    return odd ? (t->parity == AS_CCW ? AS_CW : AS_CCW) : t->parity;
}

/* ---------------------------------------------------------------- double-bond marks */

/* 1 when atom a has a non-aromatic single bond other than bond skip. */
static int has_plain_single(const as_mol *m, int a, int skip)
{
    const as_atom *at = &m->atoms[a];
    for (int k = 0; k < at->degree; k++) {
        const as_bond *b = &m->bonds[at->nbond[k]];
        if (at->nbond[k] != skip && b->order == AS_BOND_SINGLE && !b->aromatic)
            return 1;
    }
    return 0;
}

/* Assigns '/' '\' to single bonds next to real stereo double bonds, by propagation. Each
 * marked bond's value is the side of its second-written atom relative to its first. */
static void assign_dirs(writer *w)
{
    const canon_ctx *c = w->c;
    const as_mol *m = c->m;
    int nd = m->ndbs, any = 0;
    for (int i = 0; i < nd && !any; i++)
        any = c->real_db[i];
    if (!c->o->stereo || !any)
        return;
    for (int b = 0; b < m->nbonds; b++) {
        const as_bond *bd = &m->bonds[b];
        w->written_first[b] = w->visited[bd->a] < w->visited[bd->b] ? bd->a : bd->b;
    }
    /* process stereo double bonds in order of their first atom's visit index */
    int *ord = w->ord;
    int no = 0;
    for (int i = 0; i < nd; i++)
        if (c->real_db[i])
            ord[no++] = i;
    for (int i = 1; i < no; i++) {
        int x = ord[i], j = i - 1;
        int kx = w->visited[w->written_first[m->dbs[x].bond]];
        while (j >= 0 && w->visited[w->written_first[m->dbs[ord[j]].bond]] > kx) {
            ord[j + 1] = ord[j];
            j--;
        }
        ord[j + 1] = x;
    }
    /* Repeat until no change so that a later double bond can anchor an earlier one. */
    for (int round = 0; round < 2; round++) {
        for (int oi = 0; oi < no; oi++) {
            const as_dbstereo *d = &m->dbs[ord[oi]];
            const as_bond *bd = &m->bonds[d->bond];
            int ends[2] = {bd->a, bd->b};
            int refs[2] = {d->ref_a, d->ref_b};
            /* side of each end's neighbours, +1/-1 relative to that end; 0 unknown */
            int anchor_side[2] = {0, 0};
            int anchor_nbr[2] = {-1, -1};
            for (int e = 0; e < 2; e++) {
                const as_atom *u = &m->atoms[ends[e]];
                for (int k = 0; k < u->degree && !anchor_side[e]; k++) {
                    int y = u->nbr[k], bk = u->nbond[k];
                    if (bk == d->bond || !w->dir[bk])
                        continue;
                    int s = w->dir[bk];
                    /* value is side(second rel first) */
                    int side = w->written_first[bk] == ends[e] ? s : -s;
                    anchor_side[e] = side;
                    anchor_nbr[e] = y;
                }
            }
            /* express both anchors as the side of the record's reference atoms */
            int ref_side[2] = {0, 0};
            for (int e = 0; e < 2; e++) {
                if (!anchor_side[e])
                    continue;
                ref_side[e] = anchor_nbr[e] == refs[e] ? anchor_side[e] : -anchor_side[e];
            }
            if (!ref_side[0] && !ref_side[1]) {
                if (round == 1)
                    continue;
                /* first mark written at the earlier end is '/' */
                int e = w->visited[ends[0]] < w->visited[ends[1]] ? 0 : 1;
                const as_atom *u = &m->atoms[ends[e]];
                int firstn = -1, fb = -1, best = 1 << 30;
                for (int k = 0; k < u->degree; k++) {
                    int bk = u->nbond[k];
                    if (bk == d->bond)
                        continue;
                    if (w->visited[u->nbr[k]] < best) {
                        best = w->visited[u->nbr[k]];
                        firstn = u->nbr[k];
                        fb = bk;
                    }
                }
                if (fb < 0)
                    continue;
                /* dir +1 on fb: side(second rel first) = +1 */
                int side_first = w->written_first[fb] == ends[e] ? 1 : -1;
                ref_side[e] = firstn == refs[e] ? side_first : -side_first;
            }
            if (!ref_side[0])
                ref_side[0] = d->cis ? ref_side[1] : -ref_side[1];
            if (!ref_side[1])
                ref_side[1] = d->cis ? ref_side[0] : -ref_side[0];
            /* write all single bonds at both ends */
            for (int e = 0; e < 2; e++) {
                const as_atom *u = &m->atoms[ends[e]];
                for (int k = 0; k < u->degree; k++) {
                    int bk = u->nbond[k];
                    if (bk == d->bond || m->bonds[bk].order == AS_BOND_DOUBLE ||
                        m->bonds[bk].order == AS_BOND_TRIPLE)
                        continue;
                    /* aromatic ring bonds carry a mark only when nothing else can */
                    if (m->bonds[bk].aromatic && has_plain_single(m, ends[e], d->bond))
                        continue;
                    int side = u->nbr[k] == refs[e] ? ref_side[e] : -ref_side[e];
                    int val = w->written_first[bk] == ends[e] ? side : -side;
                    if (!w->dir[bk])
                        w->dir[bk] = (signed char)val;
                }
            }
        }
    }
}

/* ---------------------------------------------------------------- atom text */

static int organic_subset(int elem)
{
    return elem == 5 || elem == 6 || elem == 7 || elem == 8 || elem == 15 || elem == 16 ||
           elem == 9 || elem == 17 || elem == 35 || elem == 53;
}

/* Hydrogens a reader would give this atom if written without brackets. */
static int implied_h(const as_mol *m, int a, int aromatic_out)
{
    const as_atom *at = &m->atoms[a];
    int sum = 0;
    for (int k = 0; k < at->degree; k++) {
        const as_bond *b = &m->bonds[at->nbond[k]];
        sum += (aromatic_out && b->aromatic) ? 1 : b->order;
    }
    int v = as_default_valence(at->elem, sum);
    if (v < 0)
        return -1; /* above every normal valence: toolkits disagree, so write brackets */
    int h = v - sum - (aromatic_out && at->aromatic ? 1 : 0);
    return h > 0 ? h : 0;
}

static void write_atom(writer *w, sbuf *sb, int a)
{
    const canon_ctx *c = w->c;
    const as_mol *m = c->m;
    const as_atom *at = &m->atoms[a];
    int chir = written_chirality(w, a);
    int iso = c->o->isotopes ? at->isotope : -1;
    int map = c->o->atom_maps ? at->mapnum : 0;
    int bare = organic_subset(at->elem) && at->charge == 0 && iso < 0 && map == 0 && !chir &&
               implied_h(m, a, 1) == at->total_h &&
               (!at->aromatic || at->elem == 5 || at->elem == 6 || at->elem == 7 ||
                at->elem == 8 || at->elem == 15 || at->elem == 16);
    if (bare && at->elem == 6) {
        sb_putc(sb, at->aromatic ? 'c' : 'C'); /* most atoms */
        return;
    }
    const char *sym = as_element_symbol(at->elem);
    if (!sym)
        sym = "*";
    char low[4] = {0};
    if (at->aromatic) {
        size_t l = strlen(sym);
        for (size_t i = 0; i < l && i < 3; i++)
            low[i] = (char)(i == 0 ? sym[0] - 'A' + 'a' : sym[i]);
        sym = low;
    }
    if (at->elem == 0 && at->charge == 0 && iso < 0 && map == 0 && at->total_h == 0) {
        sb_putc(sb, '*');
        return;
    }
    if (bare) {
        sb_puts(sb, sym);
        return;
    }
    sb_putc(sb, '[');
    if (iso >= 0)
        sb_int(sb, iso);
    sb_puts(sb, sym);
    if (chir)
        sb_puts(sb, chir == AS_CCW ? "@" : "@@");
    if (at->total_h > 0) {
        sb_putc(sb, 'H');
        if (at->total_h > 1)
            sb_int(sb, at->total_h);
    }
    if (at->charge) {
        sb_putc(sb, at->charge > 0 ? '+' : '-');
        int mag = at->charge > 0 ? at->charge : -at->charge;
        if (mag > 1)
            sb_int(sb, mag);
    }
    if (map) {
        sb_putc(sb, ':');
        sb_int(sb, map);
    }
    sb_putc(sb, ']');
}

static void write_bond(const writer *w, sbuf *sb, int b, int from)
{
    const as_mol *m = w->c->m;
    const as_bond *bd = &m->bonds[b];
    (void)from;
    if (bd->aromatic) {
        if (w->dir[b])
            sb_putc(sb, w->dir[b] > 0 ? '/' : '\\');
        return;
    }
    switch (bd->order) {
    case AS_BOND_DOUBLE: sb_putc(sb, '='); return;
    case AS_BOND_TRIPLE: sb_putc(sb, '#'); return;
    case AS_BOND_QUADRUPLE: sb_putc(sb, '$'); return;
    default: break;
    }
    if (w->dir[b]) {
        sb_putc(sb, w->dir[b] > 0 ? '/' : '\\');
        return;
    }
    if (m->atoms[bd->a].aromatic && m->atoms[bd->b].aromatic)
        sb_putc(sb, '-');
}

static void write_digit(sbuf *sb, int d)
{
    if (d < 10) {
        sb_putc(sb, (char)('0' + d));
    } else {
        sb_putc(sb, '%');
        sb_int(sb, d);
    }
}

/* Pass 2: emit atoms in visit order with branches and ring digits. */
static as_status emit(writer *w, sbuf *sb)
{
    int n = w->c->n;
    char used[100] = {0};
    /* explicit stack of (atom, next child index); branch parentheses by position */
    int *stack = w->stack, *ci = w->ci;
    (void)n;
    int first_comp = 1;
    for (int k = 0; k < w->nseq; k++) {
        int s = w->seq[k];
        if (w->parent[s] >= 0)
            continue;
        if (!first_comp)
            sb_putc(sb, '.');
        first_comp = 0;
        int top = 0;
        stack[top] = s;
        ci[top] = -1;
        top++;
        while (top) {
            int u = stack[top - 1];
            if (ci[top - 1] == -1) {
                /* first time: write the atom and its ring digits */
                write_atom(w, sb, u);
                int rbs[AS_MAX_DEGREE];
                int nr = ring_bonds_at(w, u, rbs);
                for (int i = 0; i < nr; i++) {
                    ringbond *r = &w->rb[rbs[i]];
                    if (r->closer == u) {
                        /* closing: bond symbol was written at the opening */
                        write_digit(sb, r->digit);
                        used[r->digit] = 0;
                    } else {
                        int d = 1;
                        while (d < 100 && used[d])
                            d++;
                        if (d == 100) {
                            d = 0;
                            if (used[0])
                                return AS_ERR_LIMIT;
                        }
                        used[d] = 1;
                        r->digit = d;
                        write_bond(w, sb, r->bond, u);
                        write_digit(sb, d);
                    }
                }
                ci[top - 1] = 0;
            }
            int nch = w->child_start[u + 1] - w->child_start[u];
            int i = ci[top - 1];
            if (i >= nch) {
                top--;
                if (top && ci[top - 1] < w->child_start[stack[top - 1] + 1] -
                                             w->child_start[stack[top - 1]])
                    sb_putc(sb, ')');
                continue;
            }
            int v = w->children[w->child_start[u] + i];
            ci[top - 1] = i + 1;
            if (i + 1 < nch)
                sb_putc(sb, '(');
            write_bond(w, sb, w->pbond[v], u);
            stack[top] = v;
            ci[top] = -1;
            top++;
        }
    }
    return sb->oom ? AS_ERR_NOMEM : AS_OK;
}

/* Writes the SMILES for one full ranking. Returns new string or NULL. */
static char *write_smiles(canon_ctx *c, const int *rank, as_status *st)
{
    const as_mol *m = c->m;
    int n = c->n;
    writer w;
    memset(&w, 0, sizeof w);
    w.c = c;
    w.rank = rank;
    size_t na = (size_t)(n ? n : 1), nbd = (size_t)(m->nbonds ? m->nbonds : 1);
    int *p = c->wblock;
    w.visited = p, p += na;
    w.parent = p, p += na;
    w.seq = p, p += na;
    w.child_start = p, p += na + 1;
    w.children = p, p += na;
    w.stack = p, p += na;
    w.it = p, p += na;
    w.nchild = p, p += na;
    w.byrank = p, p += na;
    w.ci = p, p += na;
    w.nbuf = p, p += na * AS_MAX_DEGREE;
    w.pbond = p, p += na;
    w.nrb_at = p, p += na;
    w.written_first = p, p += nbd;
    w.ord = p;
    w.rb = c->wrb;
    w.dir = c->wdir;
    memset(w.dir, 0, (size_t)(m->nbonds ? m->nbonds : 1));
    sbuf sb = {0};
    /* a first guess at the length saves most reallocations */
    sb.cap = (size_t)n * 3 + 16;
    sb.s = malloc(sb.cap);
    char *out = NULL;
    *st = AS_ERR_NOMEM;
    if (!sb.s)
        return NULL;
    sb.s[0] = '\0';
    build_tree(&w);
    assign_dirs(&w);
    *st = emit(&w, &sb);
    if (*st == AS_OK) {
        out = sb.s;
        sb.s = NULL;
    }
    free(sb.s);
    return out;
}

/* ---------------------------------------------------------------- search over tie breaks */

static void consider(canon_ctx *c, char *s)
{
    size_t l = strlen(s);
    if (!c->best || l < c->best_len || (l == c->best_len && strcmp(s, c->best) < 0)) {
        free(c->best);
        c->best = s;
        c->best_len = l;
    } else {
        free(s);
    }
}

/* Number of ring bonds at atom a (a graph invariant: bonds that lie on a cycle). */
static int ring_bond_count(const as_mol *m, int a)
{
    int k = 0;
    for (int j = 0; j < m->atoms[a].degree; j++)
        k += m->bonds[m->atoms[a].nbond[j]].ring_size > 0;
    return k;
}

/* Breaks the ties of rank (refined first, unless `refined` says it is already equitable:
 * refining an equitable partition changes nothing). */
/* seed: -2 when rank is already equitable, -1 to refine from scratch, else the start of the
 * cell just split by setting one atom apart (only that split is propagated). */
static void explore(canon_ctx *c, int *rank, int seed)
{
    int n = c->n;
    int *work = NULL, *cnt = NULL; /* allocated when first needed */
    /* -2: rank is the partition refine() last wrote when c->part_ok says so */
    int prepared = 0, valid = seed == -2 && c->part_ok;
    for (;;) {
        if (seed != -2) {
            refine(c, rank, seed, prepared);
            valid = 1;
        }
        /* the tie to break: the first tied class next to a stereo element when there is
         * one (explored exhaustively below), else simply the first tied class */
        int r = -1, r_near = -1;
        if (valid) {
            /* the cell arrays describe rank: cell sizes are at hand */
            const int *cell_len = cells_of(c).cell_len;
            if (c->part_cells < n) {
                for (int st = 0; st < n && r < 0; st += cell_len[st])
                    if (cell_len[st] > 1)
                        r = st;
                for (int i = 0; i < n && c->has_stereo; i++)
                    if (c->near_stereo[i] && cell_len[rank[i]] > 1 &&
                        (r_near < 0 || rank[i] < r_near))
                        r_near = rank[i];
            }
        } else {
            if (!cnt && !(cnt = malloc((size_t)(n ? n : 1) * sizeof(int)))) {
                c->st = AS_ERR_NOMEM;
                break;
            }
            memset(cnt, 0, (size_t)n * sizeof(int));
            for (int i = 0; i < n; i++)
                cnt[rank[i]]++;
            for (int i = 0; i < n; i++)
                if (cnt[rank[i]] > 1) {
                    if (r < 0 || rank[i] < r)
                        r = rank[i];
                    if (c->has_stereo && c->near_stereo[i] && (r_near < 0 || rank[i] < r_near))
                        r_near = rank[i];
                }
        }
        if (r_near >= 0)
            r = r_near;
        if (r < 0) {
            as_status st;
            char *s = write_smiles(c, rank, &st);
            if (!s) {
                c->st = st;
                break;
            }
            c->leaves++;
            consider(c, s);
            break;
        }
        /* members of the first tied class, in atom order; branching pays only where the
         * class touches a stereo element (swapping the F atoms of a CF3 cannot change the
         * string, swapping two mirror-related stereocentres can) */
        /* In acyclic parts refinement classes are automorphism orbits (trees), so any
         * member will do, and so they are for atoms of a single ring (phenyl ortho pairs);
         * where rings fuse or bridge (three or more ring bonds on the atom) a class can hold
         * atoms that no symmetry exchanges (cages), so those ties are explored too. */
        int branch = r_near >= 0;
        int first = -1;
        if (valid && !branch) {
            /* the members are elems[r .. r + len): no scan of every atom */
            cells cs = cells_of(c);
            for (int k = r; k < r + cs.cell_len[r] && !branch; k++) {
                int i = cs.elems[k];
                branch = ring_bond_count(c->m, i) >= 3;
                if (first < 0 || i < first)
                    first = i;
            }
            if (branch)
                first = -1;
        } else {
            for (int i = 0; i < n && !branch; i++)
                branch = rank[i] == r && ring_bond_count(c->m, i) >= 3;
        }
        for (int i = 0; i < n && (first < 0 || branch); i++)
            if (rank[i] == r) {
                if (first < 0) {
                    first = i;
                    if (!branch)
                        break;
                    continue;
                }
                if (c->leaves >= (c->has_stereo ? MAX_LEAVES : MAX_LEAVES / 4))
                    break;
                if (!work && !(work = malloc((size_t)n * sizeof(int)))) {
                    c->st = AS_ERR_NOMEM;
                    break;
                }
                memcpy(work, rank, (size_t)n * sizeof(int));
                for (int j = 0; j < n; j++)
                    if (work[j] == r && j != i)
                        work[j] = r + 1;
                valid = 0; /* the branch's refinement overwrites the cell arrays */
                explore(c, work, r);
                if (c->st != AS_OK)
                    break;
            }
        if (c->st != AS_OK)
            break;
        for (int j = 0; j < n; j++)
            if (rank[j] == r && j != first)
                rank[j] = r + 1;
        prepared = 0;
        if (valid) {
            /* the same split in the cell arrays: `first` moves to the front of cell r and
             * stays alone there, the rest becomes cell r + 1 */
            cells cs = cells_of(c);
            int len = cs.cell_len[r], pf = cs.pos[first], other = cs.elems[r];
            cs.elems[pf] = other;
            cs.pos[other] = pf;
            cs.elems[r] = first;
            cs.pos[first] = r;
            cs.cell_len[r] = 1;
            cs.cell_len[r + 1] = len - 1;
            for (int k = r + 1; k < r + len; k++)
                cs.cell_of[cs.elems[k]] = r + 1;
            c->part_cells++;
            prepared = 1;
        }
        seed = r;
    }
    free(work);
    free(cnt);
}

/* ---------------------------------------------------------------- public */

void as_canon_opts_init(as_canon_opts *o)
{
    o->stereo = 1;
    o->atom_maps = 1;
    o->isotopes = 1;
}

static void ctx_free(canon_ctx *c)
{
    free(c->block);
    free(c->best);
}

/* Bytes of n items of size sz, rounded up to keep the next array 16-byte aligned. */
static size_t part(size_t n, size_t sz)
{
    return (n * sz + 15) & ~(size_t)15;
}

/* Bytes of stack a caller offers ctx_init: the arrays of a molecule of up to about 64 atoms
 * (25 + AS_MAX_DEGREE ints per atom and a few per bond), so the common case costs no
 * allocation at all. */
#define CTX_STACK 16384

static void ranking_restore(canon_ctx *c, const as_canon_ranking *r);

/* Lays out the arrays and computes the refined partition (c->cls and refine()'s cell
 * arrays): from the molecule, or, when r is given (the caller has checked it fits m),
 * copied from r. */
static as_status ctx_init(canon_ctx *c, const as_mol *m, const as_canon_opts *o, void *buf,
                          size_t cap, const as_canon_ranking *r)
{
    memset(c, 0, sizeof *c);
    c->m = m;
    c->o = o;
    c->n = m->natoms;
    size_t na = (size_t)(m->natoms ? m->natoms : 1);
    size_t nt = (size_t)(m->ntetra ? m->ntetra : 1), nd = (size_t)(m->ndbs ? m->ndbs : 1);
    size_t nbd = (size_t)(m->nbonds ? m->nbonds : 1);
    /* one block for every array: a molecule costs one allocation, not ten */
    size_t sz_cls = part(na, sizeof(int)), sz_tetra = part(nt, 1), sz_db = part(nd, 1);
    size_t sz_near = part(na, 1), sz_order = part(na, sizeof(int)), sz_tmp = part(na, sizeof(int));
    size_t sz_scratch = part(na * 11, sizeof(int));
    size_t sz_wblock = part(na * (13 + AS_MAX_DEGREE) + 1 + nbd + nd, sizeof(int));
    size_t sz_wrb = part(nbd, sizeof(ringbond)), sz_wdir = part(nbd, 1);
    size_t total = 2 * sz_cls + sz_tetra + sz_db + sz_near + sz_order + sz_tmp + sz_scratch +
                   sz_wblock + sz_wrb + sz_wdir;
    char *b = buf;
    if (total > cap) {
        b = malloc(total);
        if (!b)
            return AS_ERR_NOMEM;
        c->block = b;
    }
    c->rank = (int *)(void *)b, b += sz_cls;
    c->cls = (int *)(void *)b, b += sz_cls;
    c->real_tetra = b, b += sz_tetra;
    c->real_db = b, b += sz_db;
    c->near_stereo = b, b += sz_near;
    c->order = (int *)(void *)b, b += sz_order;
    c->tmp = (int *)(void *)b, b += sz_tmp;
    c->scratch = (int *)(void *)b, b += sz_scratch;
    c->wblock = (int *)(void *)b, b += sz_wblock;
    c->wrb = (ringbond *)(void *)b, b += sz_wrb;
    c->wdir = (signed char *)b;
    memset(c->real_tetra, 0, nt);
    memset(c->real_db, 0, nd);
    memset(c->near_stereo, 0, na);
    if (r) {
        ranking_restore(c, r);
        return AS_OK;
    }
    int prepared = initial_ranks(c, c->cls);
    refine(c, c->cls, -1, prepared);
    return AS_OK;
}

as_status as_canon_classes(const as_mol *m, int *cls, as_error *err)
{
    return as_canon_classes_keep(m, cls, NULL, err);
}

/* 1 when atom i of m is a plain explicit hydrogen ([H] bonded to one heavy atom, no
 * isotope, charge or class), which fold_hydrogens() folds. */
static int plain_h(const as_mol *m, int i)
{
    const as_atom *a = &m->atoms[i];
    return a->elem == 1 && a->isotope < 0 && a->charge == 0 && a->mapnum == 0 &&
           a->degree == 1 && m->atoms[a->nbr[0]].elem != 1 &&
           m->bonds[a->nbond[0]].order == AS_BOND_SINGLE;
}

/* Folds plain explicit hydrogen atoms into their neighbour's H count, so "[H]C" and "C"
 * write alike. Returns a new molecule, or NULL when there is nothing to fold (or out of
 * memory: *oom set). */
static as_mol *fold_hydrogens(const as_mol *m, int *oom)
{
    *oom = 0;
    int any = 0;
    for (int i = 0; i < m->natoms && !any; i++)
        any = plain_h(m, i);
    if (!any)
        return NULL;
    as_mol *c = as_mol_copy(m);
    if (!c) {
        *oom = 1;
        return NULL;
    }
    for (int i = c->natoms - 1; i >= 0; i--) {
        const as_atom *a = &c->atoms[i];
        if (!plain_h(c, i))
            continue;
        int heavy = a->nbr[0];
        /* a centre can hold one implicit H in its stereo record */
        int ti = as_mol_find_tetra(c, heavy), clash = 0;
        if (ti >= 0)
            for (int k = 0; k < 4; k++)
                clash |= c->tetra[ti].nbr[k] == AS_IMPLICIT_H;
        if (clash)
            continue;
        c->atoms[heavy].total_h++;
        if (c->atoms[heavy].hcount >= 0)
            c->atoms[heavy].hcount++;
        int keep_perceived = c->perceived;
        if (as_mol_remove_atom(c, i) != AS_OK) {
            as_mol_free(c);
            *oom = 1;
            return NULL;
        }
        c->perceived = keep_perceived;
    }
    /* ring data index atoms: hydrogens are never ring atoms, but indices shifted */
    if (as_perceive(c, AS_PASS_RINGS, NULL, NULL) != AS_OK) {
        as_mol_free(c);
        *oom = 1;
        return NULL;
    }
    return c;
}

/* Canonical SMILES of one connected molecule (the work of as_canon_smiles). r: a ranking
 * that fits m (as_canon_ranking_fits), or NULL. */
static as_status canon_connected(const as_mol *m, const as_canon_opts *opts,
                                 const as_canon_ranking *r, char **out, as_error *err)
{
    int oom = 0;
    /* a ranking is only kept for a molecule with no hydrogen to fold (rank_reusable) */
    as_mol *folded = r ? NULL : fold_hydrogens(m, &oom);
    if (oom)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    if (folded)
        m = folded;
    canon_ctx c;
    _Alignas(16) char buf[CTX_STACK];
    as_status st = ctx_init(&c, m, opts, buf, sizeof buf, r);
    if (st == AS_OK) {
        find_real_stereo(&c);
        st = c.st;
    }
    if (st == AS_OK && c.has_stereo) {
        stereo_refine(&c);
        st = c.st;
    }
    if (st == AS_OK) {
        /* c.cls is equitable: it comes from refine() in ctx_init or in stereo_refine */
        memcpy(c.rank, c.cls, (size_t)m->natoms * sizeof(int));
        explore(&c, c.rank, -2);
        st = c.st;
    }
    if (st == AS_OK && c.best) {
        *out = c.best;
        c.best = NULL;
    }
    ctx_free(&c);
    as_mol_free(folded);
    if (st == AS_ERR_LIMIT)
        return as_error_set(err, st, -1, -1,
                            "more than 100 ring bonds open at once: cannot write SMILES");
    if (st != AS_OK || !*out)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory while writing SMILES");
    return AS_OK;
}

/* Larger component first (the main molecule before its counter-ions), then by text. */
static int component_cmp(const void *x, const void *y)
{
    const char *a = *(const char *const *)x, *b = *(const char *const *)y;
    size_t la = strlen(a), lb = strlen(b);
    if (la != lb)
        return la > lb ? -1 : 1;
    return strcmp(a, b);
}

/* 1 when m (1 to 256 atoms) is one connected piece: the common case, checked without an
 * allocation. */
static int connected_small(const as_mol *m)
{
    unsigned char seen[256] = {0};
    unsigned char stack[256];
    int top = 0, nseen = 1;
    stack[top++] = 0;
    seen[0] = 1;
    while (top) {
        const as_atom *a = &m->atoms[stack[--top]];
        for (int j = 0; j < a->degree; j++) {
            int u = a->nbr[j];
            if (!seen[u]) {
                seen[u] = 1;
                nseen++;
                stack[top++] = (unsigned char)u;
            }
        }
    }
    return nseen == m->natoms;
}

/* as_canon_smiles; r: NULL, or a ranking that fits m (then m is one piece, with no hydrogen
 * to fold, as rank_reusable() found when r was kept). */
static as_status canon_smiles(const as_mol *m, const as_canon_opts *opts,
                              const as_canon_ranking *r, char **out, as_error *err)
{
    as_canon_opts defaults;
    if (!opts) {
        as_canon_opts_init(&defaults);
        opts = &defaults;
    }
    *out = NULL;
    if (m->natoms == 0) {
        *out = calloc(1, 1);
        return *out ? AS_OK : as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    }
    /* a ranking is only kept for a molecule in one piece (rank_reusable) */
    if (r || (m->natoms <= 256 && connected_small(m)))
        return canon_connected(m, opts, r, out, err);
    /* Components are written one by one and sorted: the same string whatever order they
     * came in, and a salt of 20,000 ions costs 20,000 small canonicalisations. */
    int *comp = malloc((size_t)m->natoms * sizeof(int));
    if (!comp)
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int ncomp = as_mol_components(m, comp);
    if (ncomp <= 1) {
        free(comp);
        return canon_connected(m, opts, NULL, out, err);
    }
    char **parts = calloc((size_t)ncomp, sizeof(char *));
    as_status st = parts ? AS_OK : as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    size_t total = 0;
    for (int k = 0; k < ncomp && st == AS_OK; k++) {
        as_mol *piece = as_mol_extract(m, comp, k);
        if (!piece || as_perceive(piece, AS_PASS_RINGS, NULL, err) != AS_OK) {
            as_mol_free(piece);
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            break;
        }
        piece->perceived = 1;
        st = canon_connected(piece, opts, NULL, &parts[k], err);
        as_mol_free(piece);
        if (st == AS_OK)
            total += strlen(parts[k]) + 1;
    }
    if (st == AS_OK) {
        qsort(parts, (size_t)ncomp, sizeof(char *), component_cmp);
        char *buf = malloc(total);
        if (!buf) {
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        } else {
            size_t used = 0;
            for (int k = 0; k < ncomp; k++) {
                size_t l = strlen(parts[k]);
                if (k)
                    buf[used++] = '.';
                memcpy(buf + used, parts[k], l);
                used += l;
            }
            buf[used] = '\0';
            *out = buf;
        }
    }
    for (int k = 0; parts && k < ncomp; k++)
        free(parts[k]);
    free(parts);
    free(comp);
    return st;
}

as_status as_canon_smiles(const as_mol *m, const as_canon_opts *opts, char **out,
                          as_error *err)
{
    return canon_smiles(m, opts, NULL, out, err);
}

as_status as_canon_from_text(const char *text, size_t len, const as_canon_opts *opts,
                             char **out, as_error *err)
{
    as_mol *m = NULL;
    *out = NULL;
    as_status st = as_smiles_parse(text, len, &m, err);
    if (st != AS_OK)
        return st;
    st = as_canon_smiles(m, opts, out, err);
    as_mol_free(m);
    return st;
}

/* ---------------------------------------------------------------- kept rankings */

/* The refined partition ctx_init computes, kept for one molecule so that its SMILES can be
 * written later without ranking it again: refine()'s cell arrays as it left them (cls, which
 * is also cell_of: each atom's cell start; elems in cell order; cell_len at the cell starts)
 * and a checksum of what they were computed from. Neither the initial key nor refine() reads
 * stereo records or the isotope/stereo writing options, so records added after the ranking
 * was kept do not make it stale; only the atom-map option enters the key. */
struct as_canon_ranking {
    int n, nbonds;
    int atom_maps;  /* 1 when map numbers were part of the initial key */
    int part_cells; /* cells of the partition */
    uint64_t sum;   /* graph_sum() of the molecule it was computed for */
    int *cls, *elems, *cell_len; /* n each, in this allocation */
};

/* Checksum of everything initial_ranks() and refine() read: per atom its degree, element,
 * charge, H count, aromatic flag, smallest ring, isotope and map number (when kept); per bond
 * its atoms, order and aromatic flag (neighbour lists are made from the bonds; refine() only
 * counts neighbours, so their order does not matter). With them fixed, so are what
 * rank_reusable() tested (one piece, no hydrogen to fold). Each step h = (h ^ w) * K is
 * one-to-one in h, so two molecules whose words differ in just one place never share the
 * sum; other differences collide with a chance of about 2^-64. */
static uint64_t graph_sum(const as_mol *m, int atom_maps)
{
    const uint64_t K = UINT64_C(0x9E3779B97F4A7C15); /* 2^64 / golden ratio, odd */
    uint64_t h = ((uint64_t)(unsigned)m->natoms * K) ^ (uint64_t)(unsigned)m->nbonds;
    for (int i = 0; i < m->natoms; i++) {
        const as_atom *a = &m->atoms[i];
        uint64_t w = (uint64_t)(a->degree & 0xff) | (uint64_t)(a->elem & 0xff) << 8 |
                     (uint64_t)(a->charge & 0xff) << 16 | (uint64_t)(a->total_h & 0xff) << 24 |
                     (uint64_t)(a->aromatic & 1) << 32 | (uint64_t)(a->ring_size & 0xffff) << 33 |
                     (uint64_t)((a->isotope + 1) & 0x7fff) << 49;
        h = (h ^ w) * K;
        if (atom_maps)
            h = (h ^ (uint64_t)(unsigned)a->mapnum) * K;
    }
    for (int b = 0; b < m->nbonds; b++) {
        const as_bond *bd = &m->bonds[b];
        h = (h ^ ((uint64_t)(unsigned)bd->a << 32 | (uint64_t)(unsigned)bd->b)) * K;
        h = (h ^ ((uint64_t)(bd->order & 0xff) | (uint64_t)(bd->aromatic & 1) << 8)) * K;
    }
    return h;
}

/* Sets c's partition and cell arrays to r's, as refine() would have left them. */
static void ranking_restore(canon_ctx *c, const as_canon_ranking *r)
{
    size_t sz = (size_t)c->n * sizeof(int);
    cells cs = cells_of(c);
    memcpy(c->cls, r->cls, sz);
    memcpy(cs.cell_of, r->cls, sz);
    memcpy(cs.elems, r->elems, sz);
    memcpy(cs.cell_len, r->cell_len, sz);
    for (int k = 0; k < c->n; k++)
        cs.pos[cs.elems[k]] = k;
    memset(cs.cnt, 0, sz);
    memset(cs.tcount, 0, sz);
    memset(cs.inq, 0, sz);
    c->part_cells = r->part_cells;
    c->part_ok = 1;
}

/* 1 when canon_connected() would rank m itself: one piece, no hydrogen to fold. */
static int rank_reusable(const as_mol *m)
{
    if (m->natoms == 0)
        return 0;
    for (int i = 0; i < m->natoms; i++)
        if (plain_h(m, i))
            return 0;
    if (m->natoms <= 256)
        return connected_small(m);
    int *comp = malloc((size_t)m->natoms * sizeof(int));
    int one = comp && as_mol_components(m, comp) == 1;
    free(comp);
    return one;
}

as_status as_canon_classes_keep(const as_mol *m, int *cls, as_canon_ranking **ranking,
                                as_error *err)
{
    if (ranking)
        *ranking = NULL;
    as_canon_opts o;
    as_canon_opts_init(&o);
    canon_ctx c;
    _Alignas(16) char buf[CTX_STACK];
    as_status st = ctx_init(&c, m, &o, buf, sizeof buf, NULL);
    if (st == AS_OK) {
        /* dense 0-based class numbers in rank order (c.order is free scratch by now) */
        int *map = c.order;
        for (int i = 0; i < m->natoms; i++)
            map[i] = -1;
        for (int i = 0; i < m->natoms; i++)
            map[c.cls[i]] = 0;
        int k = 0;
        for (int i = 0; i < m->natoms; i++)
            if (map[i] == 0)
                map[i] = k++;
        for (int i = 0; i < m->natoms; i++)
            cls[i] = map[c.cls[i]];
    }
    if (st == AS_OK && ranking && rank_reusable(m)) {
        size_t n = (size_t)m->natoms;
        as_canon_ranking *r = malloc(sizeof *r + 3 * n * sizeof(int));
        if (!r) {
            st = AS_ERR_NOMEM;
        } else {
            cells cs = cells_of(&c);
            r->n = m->natoms;
            r->nbonds = m->nbonds;
            r->atom_maps = o.atom_maps != 0;
            r->part_cells = c.part_cells;
            r->sum = graph_sum(m, r->atom_maps);
            r->cls = (int *)(void *)(r + 1);
            r->elems = r->cls + n;
            r->cell_len = r->elems + n;
            memcpy(r->cls, c.cls, n * sizeof(int));
            memcpy(r->elems, cs.elems, n * sizeof(int));
            memcpy(r->cell_len, cs.cell_len, n * sizeof(int));
            *ranking = r;
        }
    }
    ctx_free(&c);
    if (st != AS_OK)
        return as_error_set(err, st, -1, -1, "out of memory while ranking atoms");
    return AS_OK;
}

int as_canon_ranking_fits(const as_canon_ranking *r, const as_mol *m, const as_canon_opts *opts)
{
    int maps = opts ? opts->atom_maps != 0 : 1;
    return r && m && r->n == m->natoms && r->nbonds == m->nbonds && r->atom_maps == maps &&
           graph_sum(m, maps) == r->sum;
}

as_status as_canon_smiles_ranked(const as_mol *m, const as_canon_opts *opts,
                                 const as_canon_ranking *r, char **out, as_error *err)
{
    return canon_smiles(m, opts, as_canon_ranking_fits(r, m, opts) ? r : NULL, out, err);
}

void as_canon_ranking_free(as_canon_ranking *r)
{
    free(r);
}
