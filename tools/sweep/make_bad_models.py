import numpy as np, struct, json
rng = np.random.default_rng(2)
def st(name, tensors, hdr_override=None, mutate=None, extra=b''):
    hdr = {}; data = b''
    for k, a in tensors:
        b = a.astype('<f4').tobytes()
        hdr[k] = {'dtype': 'F32', 'shape': list(a.shape), 'data_offsets': [len(data), len(data)+len(b)]}
        data += b
    if mutate: mutate(hdr)
    h = json.dumps(hdr).encode() if hdr_override is None else hdr_override
    open(name, 'wb').write(struct.pack('<Q', len(h)) + h + data + extra)
W = [('0.weight', rng.standard_normal((32,40))), ('0.bias', rng.standard_normal(32)),
     ('2.weight', rng.standard_normal((16,32))), ('2.bias', rng.standard_normal(16)),
     ('4.weight', rng.standard_normal((3,16))), ('4.bias', rng.standard_normal(3))]
st('model.safetensors', W)
raw = open('model.safetensors','rb').read()
open('st_hlen_past.safetensors','wb').write(struct.pack('<Q', 10**9) + raw[8:])
open('st_trunc.safetensors','wb').write(raw[:-4])
st('st_badjson.safetensors', W, hdr_override=b'{"0.weight": {"dtype": "F32", ')
st('st_missing_bias.safetensors', [t for t in W if t[0] != '2.bias'])
st('st_missing_weight.safetensors', [t for t in W if t[0] != '2.weight'])
def wrongdtype(h): h['0.weight']['dtype'] = 'I64'
st('st_dtype_i64.safetensors', W, mutate=wrongdtype)
def dtype_f16(h): h['2.bias']['dtype'] = 'F16'
st('st_dtype_f16_size.safetensors', W, mutate=dtype_f16)
def overlap(h): h['0.bias']['data_offsets'] = [0, 128]
st('st_overlap.safetensors', W, mutate=overlap)
def past(h): h['4.bias']['data_offsets'][1] += 400
st('st_past_end.safetensors', W, mutate=past)
W2 = list(W); W2[2] = ('2.weight', rng.standard_normal((16,33)))
st('st_nochain.safetensors', W2)
W3 = list(W); W3[1] = ('0.bias', rng.standard_normal(31))
st('st_biasshape.safetensors', W3)
W4 = list(W); W4[0] = ('0.weight', rng.standard_normal((32,40,1)))
st('st_3d.safetensors', W4)
Wn = [(k, a.copy()) for k, a in W]; Wn[2][1][3,4] = np.nan
st('st_nan.safetensors', Wn)
st('st_trailing.safetensors', W, extra=b'xx')
def negshape(h): h['0.bias']['shape'] = [-32]
st('st_negshape.safetensors', W, mutate=negshape)
open('st_empty.safetensors','wb').write(b'')
open('st_tiny.safetensors','wb').write(b'\x05\0\0')
st('st_noteobject.safetensors', W, hdr_override=b'[1,2,3]')
np.save('inputs.npy', rng.standard_normal((100, 40)).astype('<f4'))
np.save('inputs_wide.npy', rng.standard_normal((10, 41)).astype('<f4'))
x = rng.standard_normal((10, 40)).astype('<f4'); x[2,7] = np.nan; np.save('inputs_nan.npy', x)
x = rng.standard_normal((10, 40)).astype('<f4') * 1e38; np.save('inputs_big.npy', x)
