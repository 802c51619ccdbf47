package org.lungflag.rules.catalog;

/** The CEL type of a variable the engine binds. */
public enum VariableType {
    DOUBLE,
    INT,
    BOOL,
    STRING
}
