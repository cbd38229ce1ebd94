#!/usr/bin/env python3
# SPDX-License-Identifier: MIT
# Derives the polynomial coefficients in include/dqfx/sincos.hpp and polar.hpp:
# near-minimax fits (Lawson's iteratively reweighted least squares, on Chebyshev nodes)
#   sin(u*pi/4) = u * P(u^2),  cos(u*pi/4) = 1 + u^2 * Q'(u^2)   for u in [0, 1]
#   atan(t)     = t * A(t^2)                                        for t in [0, 3/7]
# and prints them in the scaled forms the headers use. Needs python3-mpmath (Debian).
# Run: python3 cmake/scripts/fit_trig.py   (about a minute)
import mpmath as mp
mp.mp.dps=40
def fit(kind, ncoef, npts=400, iters=60, fix_one=False):
    # Lawson's algorithm: iteratively reweighted least squares -> minimax on abs error
    us=[mp.mpf(1)/2*(1-mp.cos(mp.pi*(k+0.5)/npts)) for k in range(npts)]
    w=[mp.mpf(1)/npts]*npts
    for it in range(iters):
        A=[];b=[]
        for u,wi in zip(us,w):
            z=u*u; s=mp.sqrt(wi)
            if kind=='sin':
                row=[u*z**k for k in range(ncoef)]; t=mp.sin(u*mp.pi/4)
            else:
                if fix_one:
                    row=[z**(k+1) for k in range(ncoef-1)]; t=mp.cos(u*mp.pi/4)-1
                else:
                    row=[z**k for k in range(ncoef)]; t=mp.cos(u*mp.pi/4)
            A.append([r*s for r in row]); b.append(t*s)
        A=mp.matrix(A); b=mp.matrix(b)
        c=mp.lu_solve(A.T*A, A.T*b)
        errs=[]
        for u in us:
            z=u*u
            if kind=='sin': v=sum(c[k]*u*z**k for k in range(ncoef)); t=mp.sin(u*mp.pi/4)
            else:
                v=(1 if fix_one else 0)+sum(c[k]*z**(k+(1 if fix_one else 0)) for k in range(len(c))); t=mp.cos(u*mp.pi/4)
            errs.append(abs(v-t))
        tot=sum(wi*e for wi,e in zip(w,errs))
        w=[wi*e/tot for wi,e in zip(w,errs)]
    coefs=list(c)
    if kind=='cos' and fix_one: coefs=[mp.mpf(1)]+coefs
    return coefs, max(errs)
T=mp.mpf(3)/7   # fold keeps t <= 0.6/1.4
def fit_atan(ncoef, npts=300, iters=60):
    ts=[T/2*(1-mp.cos(mp.pi*(k+0.5)/npts)) for k in range(npts)]
    w=[mp.mpf(1)/npts]*npts
    for it in range(iters):
        A=[];b=[]
        for t,wi in zip(ts,w):
            s=mp.sqrt(wi); z=t*t
            A.append([t*z**k*s for k in range(ncoef)]); b.append(mp.atan(t)*s)
        A=mp.matrix(A); b=mp.matrix(b)
        c=mp.lu_solve(A.T*A,A.T*b)
        errs=[abs(sum(c[k]*t*(t*t)**k for k in range(ncoef))-mp.atan(t)) for t in ts]
        tot=sum(wi*e for wi,e in zip(w,errs)); w=[wi*e/tot for wi,e in zip(w,errs)]
    return list(c),max(errs)

def q(x, b): return int(mp.nint(x * 2**b))
units = mp.mpf(2)**31 / mp.pi   # binary-angle units per radian
for name, kind, n in [('q31', 'sin', 5), ('float', 'sin', 4), ('double', 'sin', 7)]:
    c, e = fit(kind, n)
    print(name, 'sin P', 'max error', mp.nstr(e, 3), [q(x, 33) for x in c] if name == 'q31' else [mp.nstr(x, 20) for x in c])
for name, n in [('q31', 5), ('float', 5), ('double', 7)]:
    c, e = fit('cos', n, fix_one=True)
    print(name, 'cos Q', 'max error', mp.nstr(e, 3), [q(x, 33) for x in c] if name == 'q31' else [mp.nstr(x, 20) for x in c])
for n in [4, 6, 8]:
    c, e = fit_atan(n)
    print('atan', n, 'terms, max error', mp.nstr(e * units, 3), 'units', [mp.nstr(x * units, 20) for x in c])
