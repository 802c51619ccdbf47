-- Indexes for lookups that run on every inbox round or catch-up result, against tables that grow with every
-- resource received. Without them the embedded H2 database read the whole table each time, so intake slowed as the
-- audit store filled (measured in DEVELOPERS.md "Audit store"). PostgreSQL plans these either way.

-- "Is this resource version still waiting?" (catch-up search and the message-bus intake, once per resource found).
CREATE INDEX intake_inbox_resource ON intake_inbox (resource_id, resource_type, version_id);

-- Withdrawing the stored facts of replaced or retracted resources: H2 uses the leading column of an index for an
-- IN list only when it is that column, and the source type (always Observation) selects nothing.
DROP INDEX normalized_value_source;
CREATE INDEX normalized_value_source_id ON normalized_value (source_id, source_type);
