-- 007: property references are looked up without regard to ASCII case (ql-001 finds QL-001),
-- and a reference that differs from an existing one only in case is refused. This index lets
-- both run as an index search (https://www.sqlite.org/datatype3.html#collation, section 7.1:
-- a comparison with an explicit COLLATE uses an index of that collation). It is not UNIQUE:
-- a database made before it may already hold two such references, and stays readable.
CREATE INDEX property_ref_nocase ON property(ref COLLATE NOCASE);
