# thin_threshold.py — the simulation that chose cnn.thinCount (run once by hand:
# /usr/bin/python3 cnn/testdata/thin_threshold.py; numpy and SciPy from Debian).
# For each confusion distribution it draws 600 sets of n texts and reports, per
# interval rule, the share of sets whose macro-F1 interval holds the
# distribution's macro-F1, and the mean width: the percentile bootstrap
# (1,000 resamples), a Dirichlet posterior (Jeffreys), and the exact
# Bonferroni bound used where some class has min(TP, errors) below 5, 10, 20.
import numpy as np
from scipy.stats import beta
rng=np.random.default_rng(2)
def f1s(C):
    k=C.shape[-1]; out=[]
    for c in range(k):
        tp=C[...,c,c]; fp=C[...,:,c].sum(-1)-tp; fn=C[...,c,:].sum(-1)-tp
        d=2*tp+fp+fn
        out.append(np.where(d>0,2*tp/np.maximum(d,1e-300),np.nan))
    return np.stack(out,-1)
def macro(C): return np.nanmean(f1s(C),-1)
f=lambda r: 2*(1-r)/(2-r)
def cp(k,n,lev):
    a=(1-lev)/2
    lo=0 if k==0 else beta.ppf(a,k,n-k+1); hi=1 if k==n else beta.ppf(1-a,k+1,n-k)
    return lo,hi
def counts(C,c):
    tp=C[c,c]; fp=C[:,c].sum()-tp; fn=C[c,:].sum()-tp; return tp,fp+fn
def exact_macro(C):
    k=C.shape[0]; pres=[c for c in range(k) if sum(counts(C,c))>0]; m=len(pres)
    los=[];his=[]
    for c in pres:
        tp,e=counts(C,c); lo,hi=cp(e,tp+e,1-0.05/m); los.append(f(hi)); his.append(f(lo))
    return np.mean(los),np.mean(his)
def minfew(C):
    k=C.shape[0]; v=[]
    for c in range(k):
        tp,e=counts(C,c)
        if tp+e>0: v.append(min(tp,e))
    return min(v)
def run(P,n,sets=600,B=1000,T=(5,10,20)):
    k=P.shape[0]; p=P.ravel(); truth=macro(P[None])[0]
    names=['boot','dirJ','pin+dirJ','exact']+['few%d'%t for t in T]
    cov={x:0 for x in names}; w={x:0. for x in names}
    for s in range(sets):
        x=rng.multinomial(n,p); C=x.reshape(k,k)
        bs=rng.multinomial(n,x/n,size=B).reshape(B,k,k)
        b=tuple(np.nanquantile(macro(bs),[.025,.975]))
        d=tuple(np.quantile(macro(rng.dirichlet(x+.5,size=B).reshape(B,k,k)),[.025,.975]))
        ex=exact_macro(C); mf=minfew(C)
        ivs={'boot':b,'dirJ':d,'pin+dirJ':ex if mf==0 else d,'exact':ex}
        for t in T: ivs['few%d'%t]=ex if mf<t else b
        for nm,(lo,hi) in ivs.items():
            cov[nm]+=lo<=truth<=hi; w[nm]+=hi-lo
    print(' '.join('%s %.3f/%.4f'%(nm,cov[nm]/sets,w[nm]/sets) for nm in names),flush=True)
def binP(pa,eps): return np.array([[pa*(1-eps),pa*eps],[(1-pa)*eps,(1-pa)*(1-eps)]])
def triP(eps):
    g=np.array([.5,.3,.2]); P=np.zeros((3,3))
    for i in range(3):
        for j in range(3): P[i,j]=g[i]*((1-eps) if i==j else eps/2)
    return P
for n,pa,eps in [(390,2/3,.003),(390,2/3,.01),(390,2/3,.03),(390,2/3,.1),(1000,.5,.003),(1000,.5,.01),(1000,.5,.05),(1000,.5,.2),(1000,.9,.02),(1000,.9,.1)]:
    print('bin n=%d pa=%.2f eps=%g'%(n,pa,eps),end=': '); run(binP(pa,eps),n)
for n,eps in [(600,.01),(600,.05),(600,.2)]:
    print('tri n=%d eps=%g'%(n,eps),end=': '); run(triP(eps),n)
