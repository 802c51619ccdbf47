/** Lungflag's own conformance package at run time: input codes, Device, Subscription templates, validation. */
package org.lungflag.service.conformance;
