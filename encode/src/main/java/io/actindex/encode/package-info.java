/** From activations and models to codes: readers, binarization, MLP forward pass and trainer. */
package io.actindex.encode;
