"""Settle check of the quadrature: the probe-vector check against the earlier full-matrix check.

For 42 terms (Woods–Saxon, spin–orbit, Gaussian, Morse wall, Coulomb sphere, |x − x0|, a narrow
bump, an oscillating form; N = 20…200) the point count at which each check accepts the matrix,
and each matrix's largest element error against the rule two counts finer. Run by hand:
``python benchmarks/settle_study.py``.
"""
import numpy as np, math, sys, warnings
import anharmony.basis as B
from anharmony.basis import HermiteBasis as H, RadialBasis as R, _next_points, _NOISE_ULPS, QUADRATURE_RTOL
eps=np.finfo(float).eps
def old_counts(b,f,kind,breaks):
    m=b.size+24
    c,u,l,pk=B._cached_rule(b,m,kind,tuple(breaks))
    def full(m):
        c,u,live,pk=B._cached_rule(b,m,kind,tuple(breaks))
        with np.errstate(all='ignore'):
            fv=f(c); fu=fv[:,None]*u
        if np.all(np.isfinite(fv[live])): fu[~live]=0
        a=u.T@fu; return 0.5*(a+a.T), float(np.max(np.abs(fv[live]),initial=0))
    prev,_=full(m)
    while True:
        m=_next_points(m); cur,fmax=full(m)
        sc=np.abs(cur).max() or 1.0
        d=max(0,np.abs(cur-prev).max()-_NOISE_ULPS*eps*fmax)
        if d<=QUADRATURE_RTOL*sc or m>20000: return m, cur
        prev=cur
seen=[]
orig=B._Basis._quad_matrix
def rec(self,f,m,kind,breaks):
    seen.append(m); return orig(self,f,m,kind,breaks)
B._Basis._quad_matrix=rec
ws=lambda r: -51/(1+np.exp((r-4.3)/0.67))
so=lambda r: -(1/r)*np.exp((r-4.3)/0.67)/(1+np.exp((r-4.3)/0.67))**2/0.67*22
cases=[]
for n in (20,40,100,200):
    for bl in (1.0,2.0,3.0):
        cases.append((f"WS N={n} b={bl}",R(n,bl,1,3),ws,"panels",()))
        cases.append((f"SO N={n} b={bl}",R(n,bl,2,3),so,"panels",()))
for n in (20,60,150):
    cases.append((f"gauss1D N={n}",H(n,0.7,0.3),lambda x: -20*np.exp(-x*x/4),"weight",()))
    cases.append((f"morse N={n}",H(n,0.12),lambda x: 38000*(1-np.exp(-1.84*x))**2,"weight",()))
    cases.append((f"coulomb N={n}",R(n,1.5,0,3),lambda r: np.where(r<4,-(3-r*r/16)/4*2,-2/r),"panels",(4.0,)))
    cases.append((f"abs N={n}",H(n,1.0),lambda x: np.abs(x-0.37),"panels",(0.37,)))
    cases.append((f"bump N={n}",H(n,1.0),lambda x: np.exp(-((x-0.7)/0.03)**2),"panels",()))
    cases.append((f"cos N={n}",H(n,1.0),lambda x: np.cos(5*x)*np.exp(-x*x/10),"panels",()))
earlier=later=same=0
worst=0
for name,b,f,kind,br in cases:
    with warnings.catch_warnings():
        warnings.simplefilter('ignore')
        mo,ao=old_counts(b,f,kind,br)
        seen.clear(); an=b.matrix(f,kind,br); mn=seen[-1]
    ref=b._quad_matrix(f,_next_points(_next_points(mo)),kind,br)[0]
    en=np.abs(an-ref).max()/np.abs(ref).max(); eo=np.abs(ao-ref).max()/np.abs(ref).max()
    worst=max(worst,en)
    if mn<mo: earlier+=1
    elif mn>mo: later+=1
    else: same+=1
    print(f"{name:22s} old m={mo:5d} new m={mn:5d}  err old {eo:.1e} new {en:.1e}")
print('cases',len(cases),'same',same,'new earlier',earlier,'new later',later,'worst new rel err',worst)
