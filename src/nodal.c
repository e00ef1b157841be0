/* kilter: nodal (KLU) load-flow solver: placeholder until the nodal solver
 * lands; it reports that it is not available rather than returning results. */
#include "kilter/flow.h"

kl_status kl_nodal_solve(kl_network *net, const kl_flow_options *opt, kl_flow_result *res,
                         kl_errors *err)
{
    (void)net;
    (void)opt;
    (void)res;
    kl_errors_add(err, NULL, 0, 0, "load flow", "the nodal solver is not available in this "
                  "build yet: use the sweep solver (--solver sweep)");
    return KL_EARG;
}
