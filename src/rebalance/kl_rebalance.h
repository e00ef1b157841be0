/* kilter, rebalancing layer (src/rebalance): the rephaser and the advisor's
 * search.  Visible to rebalance and the layers above. */
#ifndef KILTER_REBALANCE_INTERNAL_H
#define KILTER_REBALANCE_INTERNAL_H

#include "kl_flow.h"
#include "kilter/rebalance.h"



#endif
