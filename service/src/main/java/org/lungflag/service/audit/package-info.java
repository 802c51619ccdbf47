/**
 * The audit store: quarantine, received resources, normalized values, evaluations, episodes. Resource ids,
 * versions, hashes, codes and numbers only; no names, identifiers or free text.
 */
package org.lungflag.service.audit;
