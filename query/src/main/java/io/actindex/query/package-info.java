/** The operations users ask for, as plain Java methods over an index. */
package io.actindex.query;
