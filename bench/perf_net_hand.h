/* perf_net_hand.h - a hand-written gradient of the net2.dvs network, the
 * yardstick for the generated one. It uses net2.h's structs so that both
 * read and write the same memory layout. */
#ifndef PERF_NET_HAND_H
#define PERF_NET_HAND_H

#include "net2.h"

/* Returns the loss and overwrites *grad with its gradient. */
double net_hand_gradient(const net2_param *p, const net2_input *in, net2_param *grad);

#endif
