/* family.h — the family-wise summary of a finished result, shared by the writers
 * (private to the report stage). */
#ifndef STURDY_FAMILY_H
#define STURDY_FAMILY_H

#include "core/result.h"

/* Which p the verdicts use, and how many terms stay significant after the family-wise
 * adjustment. The family is every (response, term) with a resampled p: the family over
 * which permute.c counts Westfall–Young's min-p and analysis.c applies Holm. */
typedef struct {
    size_t terms;                /* members of the family */
    size_t significant;          /* resampled p ≤ alpha (the verdict's resampling side) */
    size_t significant_f;        /* F-test p ≤ alpha */
    size_t significant_fwer;     /* Westfall–Young adjusted resampled p ≤ alpha */
    size_t significant_holm;     /* Holm adjusted resampled p ≤ alpha */
} sturdy_family;

/* Fills *f from r (zeros when r is not finished or has no resampled p). */
void sturdy_family_count(const sturdy_result *r, sturdy_family *f);

/* The line that says which p the verdicts use (static text). */
extern const char sturdy_family_rule[];

#endif
