// Package discrete realizes a continuous rate-loop design at the loop rate
// and verifies the sampled loop: controller discretization, derivative
// filter, anti-windup, ZOH plant with compute and transport delay, and the
// numeric realization (float or fixed point).
package discrete
