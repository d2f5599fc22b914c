/** The demo scenario (invented data). */
package io.actindex.demo;
