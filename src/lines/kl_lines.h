/* kilter, line-constants layer (src/lines): Carson's equations, Kron's
 * reduction, cables and shunt admittance (public API: include/kilter/lines.h).
 * Visible to lines and the layers above. */
#ifndef KILTER_LINES_INTERNAL_H
#define KILTER_LINES_INTERNAL_H

#include "kl_model.h"
#include "kilter/lines.h"



#endif
