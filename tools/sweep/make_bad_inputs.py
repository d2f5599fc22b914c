import numpy as np, struct, json, os
rng = np.random.default_rng(1)
A = rng.standard_normal((200, 40)).astype('<f4')
np.save('good.npy', A)
Q = rng.standard_normal((5, 40)).astype('<f4')
np.save('q.npy', Q)
np.save('q_wide.npy', rng.standard_normal((5, 41)).astype('<f4'))
np.save('q_narrow.npy', rng.standard_normal((5, 39)).astype('<f4'))
raw = open('good.npy','rb').read()
hl = struct.unpack('<H', raw[8:10])[0]
hdr = raw[10:10+hl]
body = raw[10+hl:]
def w(name, b): open(name,'wb').write(b)
w('trunc_header.npy', raw[:20])
w('hlen_past.npy', raw[:8] + struct.pack('<H', 60000) + raw[10:200])
w('bad_magic.npy', b'\x93NUMPX' + raw[6:])
w('v3.npy', raw[:6] + b'\x03\x00' + struct.pack('<I', hl) + hdr + body)  # v3 header uses 4-byte len
w('v9.npy', raw[:6] + b'\x09\x00' + raw[8:])
def mk(name, arr, hdrdict=None, data=None):
    if hdrdict is None:
        np.save(name, arr); return
    d = repr(hdrdict).encode('latin1')
    total = 10 + len(d) + 1
    pad = (64 - total % 64) % 64
    h = d + b' '*pad + b'\n'
    w(name, b'\x93NUMPY\x01\x00' + struct.pack('<H', len(h)) + h + (data if data is not None else arr.tobytes()))
mk('f2.npy', A.astype('<f2'))
mk('be.npy', A.astype('>f4'))
mk('bool.npy', A > 0)
np.save('obj.npy', np.array([[1, 'a'], [2, 'b']], dtype=object), allow_pickle=True)
np.save('fortran.npy', np.asfortranarray(A))
np.save('oned.npy', A[:,0].copy())
np.save('threed.npy', A.reshape(200, 4, 10))
mk('short_data.npy', None, {'descr':'<f4','fortran_order':False,'shape':(200,40)}, A.tobytes()[:-4])
mk('long_data.npy', None, {'descr':'<f4','fortran_order':False,'shape':(200,40)}, A.tobytes()+b'\0'*160)
mk('shape_more_rows.npy', None, {'descr':'<f4','fortran_order':False,'shape':(300,40)}, A.tobytes())
np.save('zero_rows.npy', np.zeros((0, 40), '<f4'))
np.save('zero_cols.npy', np.zeros((200, 0), '<f4'))
B = A.copy(); B[17, 3] = np.nan; np.save('nan.npy', B)
B = A.copy(); B[18, 4] = np.inf; np.save('inf.npy', B)
B = A.copy(); B[19, 5] = -np.inf; np.save('ninf.npy', B)
w('empty.npy', b'')
os.makedirs('dir.npy', exist_ok=True)
w('noperm.npy', raw); os.chmod('noperm.npy', 0)
np.save('c128.npy', A.astype(np.complex64))
np.save('u16.npy', (A > 0).astype('<u2'))
np.save('i64.npy', (A*100).astype('<i8'))
np.save('u64.npy', (np.abs(A)*100).astype('<u8'))
np.save('dt.npy', np.zeros((3,2), 'datetime64[s]'))
np.save('struct.npy', np.zeros((3,), dtype=[('a','<f4'),('b','<f4')]))
np.save('str.npy', np.array([['a','b']]))
mk('bad_dict.npy', None, {'descr':'<f4','fortran_order':False}, A.tobytes())
w('hdr_garbage.npy', b'\x93NUMPY\x01\x00' + struct.pack('<H', 54) + b"{'descr': '<f4', 'fortran_order': False, 'shape': (2," + b'\n'[:0] + b'   \n' + b'\0'*32)
mk('neg_shape.npy', None, {'descr':'<f4','fortran_order':False,'shape':(-1,40)}, A.tobytes())
mk('huge_shape.npy', None, {'descr':'<f4','fortran_order':False,'shape':(2**62,2**3)}, A.tobytes())
mk('ovf_shape.npy', None, {'descr':'<f4','fortran_order':False,'shape':(2**40,2**40)}, A.tobytes())
mk('f8len.npy', None, {'descr':'<f8','fortran_order':False,'shape':(100,40)}, A.tobytes())
# codes
C = (A > 0)
np.save('codes_bool.npy', C)
np.save('codes_u8.npy', C.astype('u1'))
B = C.astype('u1'); B[3,3] = 2; np.save('codes_u8_bad.npy', B)
np.save('codes_packed.npy', np.packbits(C, axis=1))
# meta CSV
keys = [f'k{i}' for i in range(200)]
def csv(name, lines, enc='utf-8', nl='\n', bom=False):
    s = nl.join(lines) + nl
    b = s.encode(enc)
    if bom: b = b'\xef\xbb\xbf' + b
    w(name, b)
labels = ['a' if i % 3 else 'b' for i in range(200)]
good = ['key,label,split,rpm'] + [f'{keys[i]},{labels[i]},{"train" if i<150 else "test"},{1000+i}' for i in range(200)]
csv('meta.csv', good)
csv('meta_nokey.csv', ['name,label'] + [f'{keys[i]},{labels[i]}' for i in range(200)])
g = list(good); g[5] = g[4]; csv('meta_dupkey.csv', g)
g = list(good); g[7] = 'k6,a,train'; csv('meta_ragged_short.csv', g)
g = list(good); g[8] = 'k7,a,train,1,extra'; csv('meta_ragged_long.csv', g)
g = list(good); g[9] = 'k8,"a, with comma",train,1008'; g[10] = 'k9,"multi\nline",train,1009'; csv('meta_quoted.csv', g)
csv('meta_bom.csv', good, bom=True)
csv('meta_crlf.csv', good, nl='\r\n')
w('meta_empty.csv', b'')
csv('meta_header_only.csv', good[:1])
csv('meta_short.csv', good[:100])
csv('meta_long.csv', good + ['k200,a,train,1'])
g = list(good); g[3] = 'kXX,a,train,1002'; csv('meta_otherkey.csv', g)
csv('meta_latin1.csv', good[:5] + ['k4,caf\xe9,train,1'] + good[6:], enc='latin-1')
csv('meta_utf16.csv', good, enc='utf-16')
g = list(good); g[10] = 'k9,"unterminated,train,1'; csv('meta_unterminated.csv', g)
g = list(good); g[11] = 'k10,a"b,train,1'; csv('meta_strayquote.csv', g)
csv('meta_dupcol.csv', ['key,label,label,rpm'] + [f'{keys[i]},a,b,1' for i in range(200)])
csv('meta_emptykey.csv', good[:3] + [',a,train,1'] + good[4:])
csv('meta_nan.csv', good[:3] + ['k2,a,train,nan'] + good[4:])
# add meta for add
Add = rng.standard_normal((50, 40)).astype('<f4'); np.save('add.npy', Add)
csv('meta_add.csv', ['key,label,split,rpm'] + [f'x{i},a,train,{i}' for i in range(50)])
csv('meta_add_clash.csv', ['key,label,split,rpm'] + [f'k{i},a,train,{i}' for i in range(50)])
# keys file for delete
csv('keys.txt', ['k1','k2'])
csv('keys_unknown.txt', ['nope'])
# npz
np.savez('good.npz', h1=A[:, :20], h2=A[:, 20:])
np.savez('npz_rows_mismatch.npz', h1=A[:, :20], h2=A[:150, 20:])
# csv activations
np.savetxt('acts.csv', A, delimiter=',', fmt='%.6f')
with open('acts_ragged.csv','w') as f:
    for i in range(20):
        f.write(','.join(['1.0']*(40 if i!=5 else 39))+'\n')
with open('acts_text.csv','w') as f:
    for i in range(20):
        f.write(','.join(['1.0']*39 + (['abc'] if i==6 else ['2']))+'\n')
with open('acts_nan.csv','w') as f:
    for i in range(20):
        f.write(','.join(['1.0']*39 + (['nan'] if i==6 else ['2']))+'\n')
