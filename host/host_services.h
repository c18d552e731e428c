/* host_services: the weft_host functions a stage calls back into (error, log, watch_fd). */
#ifndef WEFT_HOST_SERVICES_H
#define WEFT_HOST_SERVICES_H

#include "pipeline.h"

/* Fill n->host so that its callbacks report into n. */
void host_services_bind(node *n);

#endif
