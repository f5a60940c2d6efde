/* perceive.c — chemical perception as ordered passes over a freshly read molecule.
 * Owns: implicit H (OpenSMILES default valences), valence check, SSSR and ring sizes,
 * kekulisation of lowercase input, Hückel aromaticity, stereo records that cannot be real.
 * Must not: print anything. */
#include "addsite/perceive.h"
#include "status_int.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* ---------------------------------------------------------------- valence tables */

/* Normal valences of the organic subset by atomic number, ascending, 0-terminated (OpenSMILES
 * "implicit hydrogens" table); elements without a row have none. */
#define N_VALENCE_ROWS 54
static const unsigned char default_valences[N_VALENCE_ROWS][4] = {
    [5] = {3},        [6] = {4},  [7] = {3, 5},  [8] = {2},  [9] = {1},
    [15] = {3, 5},    [16] = {2, 4, 6},          [17] = {1}, [35] = {1},
    [53] = {1},
};

int as_default_valence(int elem, int used)
{
    if (elem < 0 || elem >= N_VALENCE_ROWS)
        return -1;
    const unsigned char *v = default_valences[elem];
    for (int k = 0; k < 3 && v[k]; k++)
        if (v[k] >= used)
            return v[k];
    return -1;
}

/* Largest valence allowed for a second-row atom, read through its isoelectronic neutral
 * (N+ like C, O+ like N, C- like N, C+ like B ...); -1 when we do not police the element.
 * Source: common practice (octet rule); N and P allow 5 to accept written nitro/phosphate. */
static int max_valence(int elem, int charge)
{
    int z = elem - charge;
    if (elem != 5 && elem != 6 && elem != 7 && elem != 8 && elem != 9)
        return -1;
    switch (z) {
    case 5: return 3;  /* B, C+ */
    case 6: return 4;  /* C, N+, B- */
    case 7: return elem == 7 ? 5 : 3; /* N (nitro written N(=O)=O), C-, O+ */
    case 8: return 2;  /* O, N- */
    case 9: return 1;  /* F, O- */
    case 4: return 2;  /* B+ */
    default: return -1;
    }
}

/* ---------------------------------------------------------------- hydrogens, valence */

/* Sum of the bond orders at a, aromatic bonds counted 1; *arom: how many are aromatic. */
static int bond_sum(const as_mol *m, const as_atom *a, int *arom)
{
    int sum = 0, ar = 0;
    for (int k = 0; k < a->degree; k++) {
        int o = m->bonds[a->nbond[k]].order;
        if (o == AS_BOND_AROMATIC) {
            sum++;
            ar++;
        } else {
            sum += o;
        }
    }
    *arom = ar;
    return sum;
}

/* total_h of a from its bracket count, else from the default valences given its bond sum. */
static void set_hydrogens(as_atom *a, int sum, int arom_bonds)
{
    if (a->hcount >= 0) {
        a->total_h = a->hcount;
        return;
    }
    a->total_h = 0;
    if (a->elem <= 0 || a->elem >= N_VALENCE_ROWS || !default_valences[a->elem][0])
        return; /* '*' and elements outside the organic subset */
    int v = as_default_valence(a->elem, sum);
    if (v < 0)
        return;
    /* the aromatic pi contribution is subtracted only while the bonds are still written
     * aromatic; a molecule perceived before holds Kekulé orders that already count it */
    int h = v - sum - (a->aromatic && arom_bonds ? 1 : 0);
    a->total_h = h > 0 ? h : 0;
}

static int neutral_heavy_halogen(const as_atom *a)
{
    return (a->elem == 17 || a->elem == 35 || a->elem == 53) && a->charge == 0 && !a->bracket;
}

/* 1 when a, with v bonds to it (H included), exceeds what its element and charge allow:
 * neutral Cl, Br, I take 1, 3, 5 or 7 (perchlorate, periodinanes), the rest their maximum. */
static int over_valent(const as_atom *a, int v)
{
    if (neutral_heavy_halogen(a))
        return v > 7 || v % 2 == 0;
    int maxv = max_valence(a->elem, a->charge);
    return maxv >= 0 && v > maxv;
}

static as_status pass_hydrogens(as_mol *m, as_error *err)
{
    (void)err;
    for (int i = 0; i < m->natoms; i++) {
        int arom;
        int sum = bond_sum(m, &m->atoms[i], &arom);
        set_hydrogens(&m->atoms[i], sum, arom);
    }
    return AS_OK;
}

static as_status check_valence_atom(const as_mol *m, int i, as_error *err)
{
    const as_atom *a = &m->atoms[i];
    int arom;
    int v = bond_sum(m, a, &arom) + a->total_h;
    if (!over_valent(a, v))
        return AS_OK;
    if (neutral_heavy_halogen(a))
        return as_error_set(err, AS_ERR_VALENCE, a->src_offset, i,
                            "atom %d (%s) has %d bonds to it; a neutral halogen takes 1, 3, 5 or 7",
                            i + 1, as_element_symbol(a->elem), v);
    const char *sym = as_element_symbol(a->elem);
    return as_error_set(err, AS_ERR_VALENCE, a->src_offset, i,
                        "atom %d (%s%s) has %d bonds to it, more than its valence of %d allows",
                        i + 1, sym ? sym : "?", a->charge > 0 ? "+" : a->charge < 0 ? "-" : "",
                        v, max_valence(a->elem, a->charge));
}

static as_status pass_valence(as_mol *m, as_error *err)
{
    for (int i = 0; i < m->natoms; i++) {
        if (m->atoms[i].aromatic)
            continue; /* checked after kekulisation */
        as_status st = check_valence_atom(m, i, err);
        if (st != AS_OK)
            return st;
    }
    return AS_OK;
}

/* ---------------------------------------------------------------- scratch memory */

/* Per-call scratch of a pass: a block on the stack for ordinary molecules (up to about a
 * hundred atoms), one heap block beyond that. Nothing is kept between calls, so passes stay
 * safe to run on several molecules in several threads at once. */
typedef struct scratch {
    unsigned char *base;
    size_t used, cap;
    void *heap;
    uint64_t local[640];
} scratch;

static size_t al8(size_t n)
{
    return (n + 7) & ~(size_t)7;
}

/* Makes room for need bytes (the sum of al8() of every later take); 0 on success. */
static int scratch_init(scratch *s, size_t need)
{
    s->used = 0;
    s->heap = NULL;
    if (need <= sizeof s->local) {
        s->base = (unsigned char *)s->local;
        s->cap = sizeof s->local;
        return 0;
    }
    s->heap = malloc(need);
    s->base = s->heap;
    s->cap = need;
    return s->heap ? 0 : -1;
}

/* Hands out the next n bytes (8-aligned); the caller sized the block in scratch_init. */
static void *scratch_take(scratch *s, size_t n)
{
    void *p = s->base + s->used;
    s->used += al8(n);
    return p;
}

static void scratch_done(scratch *s)
{
    free(s->heap);
}

/* ---------------------------------------------------------------- hydrogens + valence */

/* The hydrogen and valence passes in one sweep (as_perceive runs it when both are asked
 * for): one loop over each atom's bonds serves both. Hydrogens are set on every atom before
 * the first over-valent atom is reported, as when the passes run one after the other. */
static as_status pass_hydrogens_valence(as_mol *m, as_error *err)
{
    int bad = -1;
    for (int i = 0; i < m->natoms; i++) {
        as_atom *a = &m->atoms[i];
        int arom;
        int sum = bond_sum(m, a, &arom);
        set_hydrogens(a, sum, arom);
        /* aromatic atoms are checked after kekulisation */
        if (bad < 0 && !a->aromatic && over_valent(a, sum + a->total_h))
            bad = i;
    }
    return bad >= 0 ? check_valence_atom(m, bad, err) : AS_OK;
}

/* ---------------------------------------------------------------- pass: rings */

/* How the ring pass works (the result is the same as running the full search on every ring
 * system, which it was checked against):
 *  1. Ring bonds by bridge finding (Tarjan, linear), which also counts components.
 *  2. Ring systems (atoms joined by ring bonds) with their cyclomatic number. A system with
 *     cyclomatic number 1 is a single ring: every atom has two ring bonds, and the ring is
 *     walked directly.
 *  3. Fused, spiro-free bridged and other systems with more than one ring get the full
 *     search: for each ring bond the shortest cycle through it (breadth first), candidates
 *     sorted by size, and a GF(2) basis keeps the independent ones (smallest set of smallest
 *     rings).
 * Rings are listed by size, ties by the lowest-numbered bond that found them; a ring's atoms
 * start at atom a of that bond and run round the ring away from atom b, ending at b. */

typedef struct ring_work {
    int nb;           /* bonds */
    int words;        /* 64-bit words per bond set */
    uint64_t *basis;  /* accepted ring bond sets, reduced */
    int *pivot;       /* pivot bit of each basis row */
    int nbasis;
} ring_work;

/* Tarjan bridge finding, iterative: ringb[b] = 1 when b lies on a cycle. The five arrays
 * hold natoms ints each (caller's scratch). Returns the number of connected components. */
static int find_ring_bonds(const as_mol *m, char *ringb, int *disc, int *low, int *parent_bond,
                           int *iter, int *stack)
{
    int n = m->natoms, ncomp = 0;
    for (int i = 0; i < n; i++)
        disc[i] = -1;
    memset(ringb, 1, (size_t)m->nbonds);
    int t = 0;
    for (int s = 0; s < n; s++) {
        if (disc[s] >= 0)
            continue;
        ncomp++;
        int top = 0;
        stack[top++] = s;
        disc[s] = low[s] = t++;
        parent_bond[s] = -1;
        iter[s] = 0;
        while (top) {
            int u = stack[top - 1];
            if (iter[u] < m->atoms[u].degree) {
                int k = iter[u]++;
                int v = m->atoms[u].nbr[k], b = m->atoms[u].nbond[k];
                if (b == parent_bond[u])
                    continue;
                if (disc[v] < 0) {
                    disc[v] = low[v] = t++;
                    parent_bond[v] = b;
                    iter[v] = 0;
                    stack[top++] = v;
                } else if (disc[v] < low[u]) {
                    low[u] = disc[v];
                }
            } else {
                top--;
                if (top) {
                    int p = stack[top - 1];
                    if (low[u] < low[p])
                        low[p] = low[u];
                    if (low[u] > disc[p])
                        ringb[parent_bond[u]] = 0;
                }
            }
        }
    }
    return ncomp;
}

static as_status find_rings(as_mol *m, as_error *err);

/* The common case without bridge finding: strip atoms of degree 0 or 1 until none is left
 * (the 2-core). When every connected piece of the core is a single cycle (as many bonds as
 * atoms), those cycles are the ring systems and the core bonds the ring bonds: ringb, sys
 * (-1 outside rings), cyc (1 per system) and *nsys are filled and the number of core atoms
 * returned (0: acyclic). Returns -1 when a piece holds more than one cycle (fused, bridged
 * or spiro rings, or rings joined by a chain): the caller then does the full analysis. deg
 * and queue are natoms ints of scratch. */
static int prune_to_core(const as_mol *m, char *ringb, int *sys, int *cyc, int *nsys, int *deg,
                         int *queue)
{
    int n = m->natoms, head = 0, tail = 0, ncore = n;
    for (int i = 0; i < n; i++) {
        deg[i] = m->atoms[i].degree;
        sys[i] = -1;
        if (deg[i] <= 1)
            queue[tail++] = i;
    }
    while (head < tail) {
        int x = queue[head++];
        deg[x] = -1; /* removed */
        ncore--;
        const as_atom *a = &m->atoms[x];
        for (int k = 0; k < a->degree; k++) {
            int y = a->nbr[k];
            if (deg[y] > 0 && --deg[y] == 1)
                queue[tail++] = y;
        }
    }
    *nsys = 0;
    if (ncore == 0)
        return 0;
    /* pieces of the core: a single cycle has only atoms of core degree 2 */
    for (int i = 0; i < n; i++)
        if (deg[i] > 2)
            return -1;
    for (int s = 0; s < n; s++) {
        if (deg[s] < 0 || sys[s] >= 0)
            continue;
        int top = 0;
        queue[top++] = s;
        sys[s] = *nsys;
        while (top) {
            const as_atom *a = &m->atoms[queue[--top]];
            for (int k = 0; k < a->degree; k++) {
                int y = a->nbr[k];
                if (deg[y] >= 0 && sys[y] < 0) {
                    sys[y] = *nsys;
                    queue[top++] = y;
                }
            }
        }
        cyc[(*nsys)++] = 1;
    }
    for (int b = 0; b < m->nbonds; b++)
        ringb[b] = deg[m->bonds[b].a] >= 0 && deg[m->bonds[b].b] >= 0;
    return ncore;
}

/* Inserts set into the GF(2) basis when independent; returns 1 when added. */
static int basis_add(ring_work *w, uint64_t *set)
{
    for (int r = 0; r < w->nbasis; r++) {
        int p = w->pivot[r];
        if (set[p / 64] >> (p % 64) & 1) {
            const uint64_t *row = w->basis + (size_t)r * (size_t)w->words;
            for (int k = 0; k < w->words; k++)
                set[k] ^= row[k];
        }
    }
    int piv = -1;
    for (int k = 0; k < w->words && piv < 0; k++)
        if (set[k])
            piv = k * 64 + __builtin_ctzll(set[k]);
    if (piv < 0)
        return 0;
    /* keep rows reduced at their pivots */
    for (int r = 0; r < w->nbasis; r++) {
        uint64_t *row = w->basis + (size_t)r * (size_t)w->words;
        if (row[piv / 64] >> (piv % 64) & 1)
            for (int k = 0; k < w->words; k++)
                row[k] ^= set[k];
    }
    memcpy(w->basis + (size_t)w->nbasis * (size_t)w->words, set,
           (size_t)w->words * sizeof(uint64_t));
    w->pivot[w->nbasis++] = piv;
    return 1;
}

/* A ring found: its size, the bond whose search found it, where its atoms are. */
typedef struct cand {
    int size;
    int bond;
    int start;   /* offset into the atom pool */
} cand;

static int cand_cmp(const void *x, const void *y)
{
    const cand *a = x, *b = y;
    if (a->size != b->size)
        return a->size - b->size;
    return a->bond - b->bond;
}

/* Smallest set of smallest rings of the systems whose cyclomatic number cyc[sys] is above 1.
 * dist, prevb and queue are natoms ints of scratch. On success *out holds the accepted rings
 * (sorted, atoms in *out_pool; both new, caller frees) and *nout their number. */
static as_status complex_rings(as_mol *m, const char *ringb, const int *sys, const int *cyc,
                               int target, int *dist, int *prevb, int *queue, cand **out,
                               int **out_pool, int *nout, as_error *err)
{
    as_status st = AS_OK;
    int n = m->natoms;
    cand *cands = NULL;
    int ncands = 0, capc = 0;
    int *pool = NULL;
    int npool = 0, cappool = 0;
    ring_work w = {m->nbonds, (m->nbonds + 63) / 64, NULL, NULL, 0};
    uint64_t *set = NULL;
    cand *acc = NULL;
    int *apool = NULL;
    int nacc = 0, aused = 0;
    *out = NULL;
    *out_pool = NULL;
    *nout = 0;
    /* Candidates: for each ring bond u-v, the shortest path v..u avoiding the bond, closed by
     * it; every bond's smallest ring of up to AS_RING_SEARCH_MAX atoms is then known exactly.
     * The search stops at that size (a ring bond of a larger ring gets ring_size
     * AS_RING_SEARCH_MAX + 1 and no SSSR entry), and only the atoms it reached are reset, so
     * a 100,000-atom ring system or 20,000 small rings cost about n * min(ring, limit), not
     * n². */
    for (int i = 0; i < n; i++)
        dist[i] = -1;
    for (int b = 0; b < m->nbonds; b++) {
        if (!ringb[b] || cyc[sys[m->bonds[b].a]] <= 1)
            continue;
        int u = m->bonds[b].a, v = m->bonds[b].b;
        int head = 0, tail = 0;
        queue[tail++] = v;
        dist[v] = 0;
        prevb[v] = -1;
        while (head < tail && dist[u] < 0) {
            int x = queue[head++];
            if (dist[x] + 1 >= AS_RING_SEARCH_MAX)
                break;
            for (int k = 0; k < m->atoms[x].degree; k++) {
                int bk = m->atoms[x].nbond[k], y = m->atoms[x].nbr[k];
                if (bk == b || !ringb[bk] || dist[y] >= 0)
                    continue;
                dist[y] = dist[x] + 1;
                prevb[y] = x;
                queue[tail++] = y;
            }
        }
        int found = dist[u] >= 0, size = dist[u] + 1;
        if (found) {
            /* collect the ring before resetting */
            if (npool + size > cappool) {
                int nc = cappool ? cappool * 2 : 256;
                while (nc < npool + size)
                    nc *= 2;
                int *p = realloc(pool, (size_t)nc * sizeof(int));
                if (!p) {
                    st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
                    goto out;
                }
                pool = p;
                cappool = nc;
            }
            int k = npool;
            for (int x = u; x != -1; x = prevb[x])
                pool[k++] = x;
        }
        for (int q = 0; q < tail; q++)
            dist[queue[q]] = -1;
        if (!found) {
            m->bonds[b].ring_size = AS_RING_SEARCH_MAX + 1;
            continue;
        }
        m->bonds[b].ring_size = size;
        /* a macrocycle gives the same ring from each of its bonds: keep it once (rings up to
         * 64 atoms keep every candidate, so ordinary ring systems are unaffected) */
        if (size > 64 && ncands > 0 && cands[ncands - 1].size == size) {
            const int *prev = pool + cands[ncands - 1].start;
            int pu = -1, pv = -1;
            for (int k = 0; k < size; k++) {
                if (prev[k] == u)
                    pu = k;
                if (prev[k] == v)
                    pv = k;
            }
            int d = pu > pv ? pu - pv : pv - pu;
            if (pu >= 0 && pv >= 0 && (d == 1 || d == size - 1))
                continue; /* b is a bond of the previous candidate ring */
        }
        if (ncands == capc) {
            int nc = capc ? capc * 2 : 64;
            cand *c = realloc(cands, (size_t)nc * sizeof(cand));
            if (!c) {
                st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
                goto out;
            }
            cands = c;
            capc = nc;
        }
        cands[ncands].size = size;
        cands[ncands].bond = b;
        cands[ncands].start = npool;
        ncands++;
        npool += size;
    }
    if (!cands) /* every ring is larger than AS_RING_SEARCH_MAX */
        goto out;
    qsort(cands, (size_t)ncands, sizeof(cand), cand_cmp);
    if (w.words <= 0 || target <= 0 || target > m->nbonds) /* never: keeps sizes small */
        goto out;
    w.basis = calloc((size_t)target * (size_t)w.words, sizeof(uint64_t));
    w.pivot = malloc((size_t)target * sizeof(int));
    set = malloc((size_t)w.words * sizeof(uint64_t));
    acc = malloc((size_t)target * sizeof(cand));
    apool = malloc((size_t)npool * sizeof(int));
    if (!w.basis || !w.pivot || !set || !acc || !apool) {
        st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
        goto out;
    }
    for (int c = 0; c < ncands && nacc < target; c++) {
        memset(set, 0, (size_t)w.words * sizeof(uint64_t));
        const int *ra = pool + cands[c].start;
        int sz = cands[c].size;
        for (int k = 0; k < sz; k++) {
            int bk = as_mol_bond_between(m, ra[k], ra[(k + 1) % sz]);
            set[bk / 64] |= (uint64_t)1 << (bk % 64);
        }
        if (!basis_add(&w, set))
            continue;
        memcpy(apool + aused, ra, (size_t)sz * sizeof(int));
        acc[nacc].size = sz;
        acc[nacc].bond = cands[c].bond;
        acc[nacc].start = aused;
        nacc++;
        aused += sz;
    }
    *out = acc;
    *out_pool = apool;
    *nout = nacc;
    acc = NULL;
    apool = NULL;
out:
    free(cands);
    free(pool);
    free(w.basis);
    free(w.pivot);
    free(set);
    free(acc);
    free(apool);
    return st;
}

static as_status pass_rings(as_mol *m, as_error *err)
{
    if (m->rings_known)
        return AS_OK; /* no edit since the last search could change a ring */
    as_status st = find_rings(m, err);
    m->rings_known = st == AS_OK;
    return st;
}

static as_status find_rings(as_mol *m, as_error *err)
{
    as_mol_set_rings(m, 0, NULL, NULL);
    for (int i = 0; i < m->natoms; i++)
        m->atoms[i].ring_size = 0;
    for (int i = 0; i < m->nbonds; i++)
        m->bonds[i].ring_size = 0;
    if (m->nbonds == 0)
        return AS_OK;
    int n = m->natoms;
    size_t ni = al8((size_t)n * sizeof(int));
    scratch sc;
    if (scratch_init(&sc, 11 * ni + al8((size_t)m->nbonds) + al8(3 * (size_t)n * sizeof(int))))
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int *disc = scratch_take(&sc, ni), *low = scratch_take(&sc, ni);
    int *parent_bond = scratch_take(&sc, ni), *iter = scratch_take(&sc, ni);
    int *stack = scratch_take(&sc, ni), *sys = scratch_take(&sc, ni);
    int *cyc = scratch_take(&sc, ni), *spool = scratch_take(&sc, ni);
    cand *simple = scratch_take(&sc, 3 * (size_t)n * sizeof(int));
    char *ringb = scratch_take(&sc, (size_t)m->nbonds);
    as_status st = AS_OK;
    cand *cx = NULL;
    int *cxpool = NULL, ncx = 0;

    int nsys = 0, target_cx = 0;
    int core = prune_to_core(m, ringb, sys, cyc, &nsys, disc, stack);
    if (core == 0)
        goto out; /* acyclic */
    if (core < 0) { /* more than one ring in a system, or rings joined by chains */
        int ncomp = find_ring_bonds(m, ringb, disc, low, parent_bond, iter, stack);
        if (m->nbonds - m->natoms + ncomp <= 0)
            goto out; /* acyclic */

        /* ring systems and their cyclomatic numbers (ring bonds - atoms + 1) */
        for (int i = 0; i < n; i++)
            sys[i] = -1;
        for (int s = 0; s < n; s++) {
            if (sys[s] >= 0)
                continue;
            int ring_atom = 0;
            for (int k = 0; k < m->atoms[s].degree && !ring_atom; k++)
                ring_atom = ringb[m->atoms[s].nbond[k]];
            if (!ring_atom)
                continue;
            int top = 0, na = 0, ends = 0;
            stack[top++] = s;
            sys[s] = nsys;
            while (top) {
                int x = stack[--top];
                na++;
                for (int k = 0; k < m->atoms[x].degree; k++) {
                    if (!ringb[m->atoms[x].nbond[k]])
                        continue;
                    ends++;
                    int y = m->atoms[x].nbr[k];
                    if (sys[y] < 0) {
                        sys[y] = nsys;
                        stack[top++] = y;
                    }
                }
            }
            cyc[nsys] = ends / 2 - na + 1;
            if (cyc[nsys] > 1)
                target_cx += cyc[nsys];
            nsys++;
        }
    }

    /* single rings: walked from atom a of their lowest-numbered bond, away from atom b */
    int nsimple = 0, nspool = 0;
    for (int b = 0; b < m->nbonds; b++) {
        if (!ringb[b])
            continue;
        int id = sys[m->bonds[b].a];
        if (cyc[id] != 1)
            continue;
        cyc[id] = 0; /* done */
        int u = m->bonds[b].a, v = m->bonds[b].b, cur = u, came = b, size = 0;
        int *ring = spool + nspool;
        for (;;) {
            ring[size++] = cur;
            if (cur == v)
                break;
            const as_atom *a = &m->atoms[cur];
            int k = 0;
            while (a->nbond[k] == came || !ringb[a->nbond[k]])
                k++;
            came = a->nbond[k];
            cur = a->nbr[k];
        }
        int rs = size <= AS_RING_SEARCH_MAX ? size : AS_RING_SEARCH_MAX + 1;
        for (int j = 0; j < size; j++) {
            const as_atom *a = &m->atoms[ring[j]];
            for (int k = 0; k < a->degree; k++)
                if (ringb[a->nbond[k]])
                    m->bonds[a->nbond[k]].ring_size = rs;
        }
        if (size > AS_RING_SEARCH_MAX)
            continue;
        simple[nsimple].size = size;
        simple[nsimple].bond = b;
        simple[nsimple].start = nspool;
        nsimple++;
        nspool += size;
    }
    /* a handful at most: insertion sort by size, then bond */
    for (int i = 1; i < nsimple; i++)
        for (int j = i; j > 0 && cand_cmp(&simple[j - 1], &simple[j]) > 0; j--) {
            cand t = simple[j];
            simple[j] = simple[j - 1];
            simple[j - 1] = t;
        }

    if (target_cx > 0 &&
        (st = complex_rings(m, ringb, sys, cyc, target_cx, disc, low, iter, &cx, &cxpool, &ncx,
                            err)) != AS_OK)
        goto out;

    /* merge the two sorted lists */
    int nr = nsimple + ncx;
    if (nr > 0) {
        int total = nspool;
        for (int i = 0; i < ncx; i++)
            total += cx[i].size;
        int *rstart = malloc((size_t)(nr + 1) * sizeof(int));
        int *ratoms = malloc((size_t)total * sizeof(int));
        if (!rstart || !ratoms) {
            free(rstart);
            free(ratoms);
            st = as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
            goto out;
        }
        as_mol_set_rings(m, 0, rstart, ratoms);
        int i = 0, j = 0, used = 0;
        m->ring_start[0] = 0;
        while (i < nsimple || j < ncx) {
            const int *src;
            int sz;
            if (j == ncx || (i < nsimple && cand_cmp(&simple[i], &cx[j]) < 0)) {
                src = spool + simple[i].start;
                sz = simple[i++].size;
            } else {
                src = cxpool + cx[j].start;
                sz = cx[j++].size;
            }
            memcpy(m->ring_atoms + used, src, (size_t)sz * sizeof(int));
            used += sz;
            m->ring_start[++m->nrings] = used;
        }
    }
    for (int b = 0; b < m->nbonds; b++) {
        int s = m->bonds[b].ring_size;
        if (!s)
            continue;
        for (int e = 0; e < 2; e++) {
            as_atom *a = &m->atoms[e ? m->bonds[b].b : m->bonds[b].a];
            if (!a->ring_size || s < a->ring_size)
                a->ring_size = s;
        }
    }
out:
    free(cx);
    free(cxpool);
    scratch_done(&sc);
    return st;
}

/* ---------------------------------------------------------------- pass: kekulisation */

/* 1 when the aromatic atom must take one double bond inside the aromatic system. */
static int needs_double(const as_mol *m, int i)
{
    const as_atom *a = &m->atoms[i];
    int z = a->elem - a->charge; /* isoelectronic neutral */
    int v;
    switch (z) {
    case 5: v = 3; break;   /* B, C+ */
    case 6: v = 4; break;   /* C, N+ */
    case 7: v = 3; break;   /* N, O+, C- */
    case 8: v = 2; break;   /* O, N- */
    case 15: v = 3; break;  /* P */
    case 16: v = 2; break;  /* S */
    case 14: v = 4; break;  /* P+ */
    case 33: v = 3; break;  /* As */
    case 34: v = 2; break;  /* Se */
    case 52: v = 2; break;  /* Te */
    default: return 0;
    }
    int sum = 0;
    for (int k = 0; k < a->degree; k++) {
        int o = m->bonds[a->nbond[k]].order;
        sum += o == AS_BOND_AROMATIC ? 1 : o;
    }
    int free_v = v - sum - a->total_h;
    /* P(V), S(IV), S(VI) in aromatic rings (phosphazenes written with lowercase p): the next
     * normal valence that the bonds fit */
    if (free_v < 0 && (z == 15 || z == 33))
        free_v = 5 - sum - a->total_h;
    if (free_v < 0 && (z == 16 || z == 34))
        free_v = (sum + a->total_h <= 4 ? 4 : 6) - sum - a->total_h;
    return free_v == 1;
}

typedef struct kek {
    as_mol *m;
    char *need;     /* atom still needs a double bond */
    long steps;
    const int *cand; /* the atoms that needed one at the start, ascending */
    int ncand;
} kek;

/* Picks a partner for the lowest-option atom, recursively. */
static int kek_solve(kek *k)
{
    as_mol *m = k->m;
    if (++k->steps > 2000000)
        return -1;
    int best = -1, best_opts = 99;
    for (int c = 0; c < k->ncand; c++) {
        int i = k->cand[c];
        if (!k->need[i])
            continue;
        int opts = 0;
        const as_atom *a = &m->atoms[i];
        for (int j = 0; j < a->degree; j++)
            if (k->need[a->nbr[j]] && m->bonds[a->nbond[j]].order == AS_BOND_AROMATIC)
                opts++;
        if (opts < best_opts) {
            best_opts = opts;
            best = i;
        }
        if (opts <= 1)
            break;
    }
    if (best < 0)
        return 1;
    if (best_opts == 0)
        return 0;
    const as_atom *a = &m->atoms[best];
    for (int j = 0; j < a->degree; j++) {
        int y = a->nbr[j], b = a->nbond[j];
        if (!k->need[y] || m->bonds[b].order != AS_BOND_AROMATIC)
            continue;
        k->need[best] = k->need[y] = 0;
        m->bonds[b].order = AS_BOND_DOUBLE;
        int r = kek_solve(k);
        if (r != 0)
            return r;
        m->bonds[b].order = AS_BOND_AROMATIC;
        k->need[best] = k->need[y] = 1;
    }
    return 0;
}

static as_status pass_kekule(as_mol *m, as_error *err)
{
    int any = 0;
    for (int i = 0; i < m->natoms; i++) {
        as_atom *a = &m->atoms[i];
        if (!a->aromatic)
            continue;
        any = 1;
        if (!a->ring_size) {
            return as_error_set(err, AS_ERR_AROMATIC, a->src_offset, i,
                                "atom %d is written aromatic (lowercase) but is not in a ring", i + 1);
        }
    }
    for (int b = 0; b < m->nbonds; b++) {
        if (m->bonds[b].order == AS_BOND_AROMATIC && !m->bonds[b].ring_size) {
            /* ':' outside a ring, or two lowercase atoms joined across rings without '-' */
            const as_atom *x = &m->atoms[m->bonds[b].a], *y = &m->atoms[m->bonds[b].b];
            if (!x->aromatic || !y->aromatic)
                return as_error_set(err, AS_ERR_AROMATIC, y->src_offset, m->bonds[b].b,
                                    "aromatic bond ':' between atoms %d and %d outside an "
                                    "aromatic ring",
                                    m->bonds[b].a + 1, m->bonds[b].b + 1);
            m->bonds[b].order = AS_BOND_SINGLE; /* biphenyl-like link between two rings */
        }
    }
    if (!any) {
        for (int b = 0; b < m->nbonds; b++)
            if (m->bonds[b].order == AS_BOND_AROMATIC)
                return as_error_set(err, AS_ERR_AROMATIC, m->atoms[m->bonds[b].b].src_offset,
                                    m->bonds[b].b,
                                    "aromatic bond ':' between atoms that are not aromatic");
        return AS_OK;
    }
    scratch sc;
    if (scratch_init(&sc, al8((size_t)m->natoms) + al8((size_t)m->natoms * sizeof(int))))
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int *needy = scratch_take(&sc, (size_t)m->natoms * sizeof(int));
    kek k = {m, scratch_take(&sc, (size_t)m->natoms), 0, needy, 0};
    memset(k.need, 0, (size_t)m->natoms);
    int first_need = -1;
    for (int i = 0; i < m->natoms; i++) {
        if (!m->atoms[i].aromatic)
            continue;
        int has_arom_bond = 0;
        for (int j = 0; j < m->atoms[i].degree; j++)
            if (m->bonds[m->atoms[i].nbond[j]].order == AS_BOND_AROMATIC)
                has_arom_bond = 1;
        if (has_arom_bond && needs_double(m, i)) {
            k.need[i] = 1;
            needy[k.ncand++] = i;
            if (first_need < 0)
                first_need = i;
        }
    }
    int r = kek_solve(&k);
    as_status st = AS_OK;
    if (r <= 0) {
        int bad = first_need;
        for (int i = 0; i < m->natoms; i++)
            if (k.need[i]) {
                bad = i;
                break;
            }
        /* point at the usual culprit: a pyrrole-type n without its H in a five-membered
         * ring, or an [nH] in a six-membered ring */
        for (int i = 0; i < m->natoms; i++) {
            const as_atom *x = &m->atoms[i];
            if (!x->aromatic || x->elem != 7 || x->charge != 0 || x->degree != 2)
                continue;
            if ((x->total_h == 0 && x->ring_size == 5) || (x->total_h == 1 && x->ring_size == 6)) {
                bad = i;
                break;
            }
        }
        if (bad < 0)
            bad = 0;
        const as_atom *a = &m->atoms[bad];
        int has_pyrrole_n = 0;
        for (int i = 0; i < m->natoms; i++)
            if (m->atoms[i].aromatic && m->atoms[i].elem == 7 && m->atoms[i].total_h == 0 &&
                m->atoms[i].degree == 2 && m->atoms[i].charge == 0)
                has_pyrrole_n = 1;
        st = as_error_set(err, AS_ERR_AROMATIC, a->src_offset, bad,
                          "cannot kekulise the aromatic ring system at atom %d%s", bad + 1,
                          has_pyrrole_n
                              ? ": a pyrrole-type nitrogen needs its hydrogen written, as [nH]"
                              : ": no arrangement of double bonds fits the written atoms");
    } else {
        for (int b = 0; b < m->nbonds; b++)
            if (m->bonds[b].order == AS_BOND_AROMATIC)
                m->bonds[b].order = AS_BOND_SINGLE;
        for (int i = 0; i < m->natoms && st == AS_OK; i++)
            if (m->atoms[i].aromatic)
                st = check_valence_atom(m, i, err);
    }
    scratch_done(&sc);
    return st;
}

/* ---------------------------------------------------------------- pass: aromaticity */

/* Ring systems: atoms joined by ring bonds share an id (union-find); -1 for acyclic atoms. */
static int find_root(int *parent, int x)
{
    while (parent[x] != x) {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    return x;
}

/* π electrons atom i gives to any ring of its ring system, or -1 when it cannot be part of
 * an aromatic ring. Model: Hückel, common practice (as in most toolkits): a double bond to
 * another atom of the same ring system 1 e; exocyclic C=O/C=N/C=S 0 e; lone pair (NH, NR,
 * O, S, C-) 2 e; empty p orbital (C+, B) 0 e; anything sp3 or with more than three
 * neighbours (P(V), S(IV)) cannot take part.
 * The count depends only on the graph, never on which Kekulé structure was written: bonds
 * outside rings are double in every Kekulé structure or in none, so "double bond inside the
 * ring system" is the same for all of them. */
static int pi_electrons(const as_mol *m, int i, const int *sys)
{
    const as_atom *a = &m->atoms[i];
    /* '*' never joins an aromatic ring: the reader cannot kekulise an aromatic '*' */
    if (sys[i] < 0 || a->elem == 0 || a->degree + a->total_h > 3)
        return -1;
    int dbl_in = 0, dbl_exo = -1, sum = 0;
    for (int k = 0; k < a->degree; k++) {
        const as_bond *b = &m->bonds[a->nbond[k]];
        sum += b->order;
        if (b->order == AS_BOND_TRIPLE)
            return -1;
        if (b->order == AS_BOND_DOUBLE) {
            int y = a->nbr[k];
            if (sys[y] == sys[i] && b->ring_size)
                dbl_in++;
            else
                dbl_exo = y;
        }
    }
    if (dbl_in == 1 && dbl_exo < 0)
        return 1;
    if (dbl_in)
        return -1;
    if (dbl_exo >= 0) {
        const as_atom *y = &m->atoms[dbl_exo];
        if (a->elem == 6 && (y->elem == 8 || y->elem == 7 || y->elem == 16))
            return 0; /* C=O in pyridones, not S=O or P=O */
        return -1;
    }
    int bonds = sum + a->total_h;
    switch (a->elem) {
    case 6:
        if (a->charge == -1 && bonds == 3)
            return 2;
        if (a->charge == 1 && bonds == 3)
            return 0;
        return -1;
    case 7:
    case 15:
    case 33:
        if (a->charge == 0 && bonds == 3)
            return 2;
        if (a->charge == -1 && bonds == 2)
            return 2;
        return -1;
    case 8:
    case 16:
    case 34:
    case 52:
        return a->charge == 0 && bonds == 2 ? 2 : -1;
    case 5:
        return a->charge == 0 && bonds == 3 ? 0 : -1;
    default:
        return -1;
    }
}

/* Tests one set of atoms (a ring or a union of fused rings) for 4n+2. */
static int ring_set_aromatic(const int *atoms, int n, const int *pi)
{
    int total = 0;
    for (int k = 0; k < n; k++) {
        if (pi[atoms[k]] < 0)
            return 0;
        total += pi[atoms[k]];
    }
    return total % 4 == 2;
}

static as_status pass_aromatic(as_mol *m, as_error *err)
{
    for (int i = 0; i < m->natoms; i++)
        m->atoms[i].aromatic = 0;
    for (int b = 0; b < m->nbonds; b++)
        m->bonds[b].aromatic = 0;
    if (m->nrings == 0)
        return AS_OK;
    int n = m->natoms;
    int nr = m->nrings, total = m->ring_start[nr];
    as_status st = AS_OK;
    size_t ni = (size_t)n * sizeof(int), ni1 = ((size_t)n + 1) * sizeof(int);
    size_t nt = (size_t)(total ? total : 1) * sizeof(int), nri = (size_t)nr * sizeof(int);
    scratch sc;
    if (scratch_init(&sc, 2 * al8(ni) + al8((size_t)nr) + 2 * al8(ni1) + al8((size_t)n) +
                              al8(nt) + al8(nri)))
        return as_error_set(err, AS_ERR_NOMEM, -1, -1, "out of memory");
    int *sys = scratch_take(&sc, ni), *pi = scratch_take(&sc, ni);
    char *ring_done = scratch_take(&sc, (size_t)nr);
    int *buf = scratch_take(&sc, ni1);
    char *seen = scratch_take(&sc, (size_t)n);
    int *at_start = scratch_take(&sc, ni1); /* rings through each atom (CSR) */
    int *at_ring = scratch_take(&sc, nt), *mark = scratch_take(&sc, nri);
    memset(ring_done, 0, (size_t)nr);
    for (int i = 0; i < n; i++)
        sys[i] = i;
    for (int b = 0; b < m->nbonds; b++)
        if (m->bonds[b].ring_size) {
            int x = find_root(sys, m->bonds[b].a), y = find_root(sys, m->bonds[b].b);
            if (x != y)
                sys[x] = y;
        }
    for (int i = 0; i < n; i++)
        sys[i] = m->atoms[i].ring_size ? find_root(sys, i) : -1;
    for (int i = 0; i < n; i++)
        pi[i] = pi_electrons(m, i, sys);
    /* single rings, then unions of two fused rings (sharing a bond) */
    for (int r = 0; r < m->nrings; r++) {
        int s = m->ring_start[r], e = m->ring_start[r + 1];
        if (e - s <= 24 && ring_set_aromatic(m->ring_atoms + s, e - s, pi))
            ring_done[r] = 1;
    }
    /* only rings that touch are paired (a molecule with one ring has none) */
    if (nr > 1) {
        memset(seen, 0, (size_t)n);
        memset(at_start, 0, ni1);
        for (int j = 0; j < total; j++)
            at_start[m->ring_atoms[j] + 1]++;
        for (int i = 0; i < n; i++)
            at_start[i + 1] += at_start[i];
        for (int r = 0; r < nr; r++)
            for (int j = m->ring_start[r]; j < m->ring_start[r + 1]; j++)
                at_ring[at_start[m->ring_atoms[j]]++] = r;
        for (int i = n; i > 0; i--)
            at_start[i] = at_start[i - 1];
        at_start[0] = 0;
        for (int r = 0; r < nr; r++)
            mark[r] = -1;
        for (int r1 = 0; r1 < nr; r1++) {
            int s1 = m->ring_start[r1], e1 = m->ring_start[r1 + 1];
            for (int j1 = s1; j1 < e1; j1++) {
                int x = m->ring_atoms[j1];
                for (int q = at_start[x]; q < at_start[x + 1]; q++) {
                    int r2 = at_ring[q];
                    if (r2 <= r1 || mark[r2] == r1)
                        continue;
                    mark[r2] = r1;
                    if (ring_done[r1] && ring_done[r2])
                        continue;
                    int s2 = m->ring_start[r2], e2 = m->ring_start[r2 + 1];
                    if (e1 - s1 + e2 - s2 > 24)
                        continue;
                    int shared = 0, k = 0;
                    for (int j = s1; j < e1; j++) {
                        buf[k++] = m->ring_atoms[j];
                        seen[m->ring_atoms[j]] = 1;
                    }
                    for (int j = s2; j < e2; j++) {
                        if (seen[m->ring_atoms[j]])
                            shared++;
                        else
                            buf[k++] = m->ring_atoms[j];
                    }
                    for (int j = s1; j < e1; j++)
                        seen[m->ring_atoms[j]] = 0;
                    if (shared == 2 && ring_set_aromatic(buf, k, pi))
                        ring_done[r1] = ring_done[r2] = 1;
                }
            }
        }
    }
    for (int r = 0; r < m->nrings; r++) {
        if (!ring_done[r])
            continue;
        int s = m->ring_start[r], e = m->ring_start[r + 1];
        for (int k = s; k < e; k++) {
            int x = m->ring_atoms[k], y = m->ring_atoms[s + (k - s + 1) % (e - s)];
            m->atoms[x].aromatic = 1;
            int b = as_mol_bond_between(m, x, y);
            if (b >= 0)
                m->bonds[b].aromatic = 1;
        }
    }
    scratch_done(&sc);
    return st;
}

/* ---------------------------------------------------------------- pass: stereo */

/* 1 when atom a is a bridgehead: it lies on two SSSR rings that share three or more atoms
 * (a bridged, not merely fused, system), where an amine nitrogen cannot invert. */
static int bridgehead(const as_mol *m, int a)
{
    for (int r1 = 0; r1 < m->nrings; r1++) {
        int in1 = 0;
        for (int k = m->ring_start[r1]; k < m->ring_start[r1 + 1]; k++)
            in1 |= m->ring_atoms[k] == a;
        if (!in1)
            continue;
        for (int r2 = r1 + 1; r2 < m->nrings; r2++) {
            int in2 = 0, shared = 0;
            for (int k = m->ring_start[r2]; k < m->ring_start[r2 + 1]; k++) {
                int x = m->ring_atoms[k];
                in2 |= x == a;
                for (int j = m->ring_start[r1]; j < m->ring_start[r1 + 1]; j++)
                    shared += m->ring_atoms[j] == x;
            }
            if (in2 && shared >= 3)
                return 1;
        }
    }
    return 0;
}

static as_status pass_stereo(as_mol *m, as_error *err)
{
    (void)err;
    for (int i = m->ntetra - 1; i >= 0; i--) {
        const as_tetra *t = &m->tetra[i];
        const as_atom *a = &m->atoms[t->center];
        int nh = 0, keep = 1;
        for (int k = 0; k < 4; k++)
            nh += t->nbr[k] == AS_IMPLICIT_H;
        if (a->aromatic || a->total_h > 1 || nh > 1)
            keep = 0;
        /* P, S, Se centres may carry =O (sulfoxides, phosphonates); others all single */
        int hyper = a->elem == 15 || a->elem == 16 || a->elem == 34;
        for (int k = 0; k < a->degree && keep; k++) {
            int o = m->bonds[a->nbond[k]].order;
            if (o != AS_BOND_SINGLE && !(hyper && o == AS_BOND_DOUBLE))
                keep = 0;
        }
        if (keep && a->degree + a->total_h == 3) {
            /* lone-pair centres: keep S, P, Se and ring-strained N (aziridines) */
            if (a->elem == 7 && a->charge == 0)
                keep = a->ring_size == 3 || bridgehead(m, t->center);
            else if (a->elem == 6)
                keep = 0;
        } else if (keep && a->degree + a->total_h != 4) {
            keep = 0;
        }
        if (!keep)
            m->tetra[i] = m->tetra[--m->ntetra];
    }
    for (int i = m->ndbs - 1; i >= 0; i--) {
        const as_bond *b = &m->bonds[m->dbs[i].bond];
        int keep = b->order == AS_BOND_DOUBLE && !b->aromatic &&
                   (b->ring_size == 0 || b->ring_size >= 8);
        if (!keep)
            m->dbs[i] = m->dbs[--m->ndbs];
    }
    return AS_OK;
}

/* ---------------------------------------------------------------- warnings */

int as_perceive_suspect_atom(const as_mol *m)
{
    for (int i = 0; i < m->natoms; i++) {
        const as_atom *a = &m->atoms[i];
        if (a->elem != 7 || a->charge != 0 || a->bracket || a->aromatic || a->degree != 4)
            continue;
        int single = 1;
        for (int k = 0; k < a->degree; k++)
            single &= m->bonds[a->nbond[k]].order == AS_BOND_SINGLE;
        if (single)
            return i;
    }
    return -1;
}

/* ---------------------------------------------------------------- driver */

as_status as_perceive(as_mol *m, unsigned passes, unsigned *failed_pass, as_error *err)
{
    static const struct {
        unsigned bit;
        as_status (*run)(as_mol *, as_error *);
    } table[] = {
        {AS_PASS_HYDROGENS, pass_hydrogens}, {AS_PASS_VALENCE, pass_valence},
        {AS_PASS_RINGS, pass_rings},         {AS_PASS_KEKULE, pass_kekule},
        {AS_PASS_AROMATIC, pass_aromatic},   {AS_PASS_STEREO, pass_stereo},
    };
    if (failed_pass)
        *failed_pass = 0;
    size_t first = 0;
    if ((passes & (AS_PASS_HYDROGENS | AS_PASS_VALENCE)) ==
        (AS_PASS_HYDROGENS | AS_PASS_VALENCE)) {
        as_status st = pass_hydrogens_valence(m, err);
        if (st != AS_OK) {
            if (failed_pass)
                *failed_pass = AS_PASS_VALENCE;
            return st;
        }
        first = 2; /* table[0] and table[1] are done */
    }
    for (size_t i = first; i < sizeof table / sizeof table[0]; i++) {
        if (!(passes & table[i].bit))
            continue;
        as_status st = table[i].run(m, err);
        if (st != AS_OK) {
            if (failed_pass)
                *failed_pass = table[i].bit;
            return st;
        }
    }
    if ((passes & AS_PASS_ALL) == AS_PASS_ALL)
        m->perceived = 1;
    return AS_OK;
}
