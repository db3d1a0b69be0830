/* Shortest round-trip formatting of IEEE-754 binary64 values.
 *
 * Algorithm: Schubfach, R. Giulietti, "The Schubfach way to render doubles" (2020, revised
 * 2021), implemented here from the paper's description. Outline, for a finite v != 0 written as
 * v = c * 2^q with integer c (c in [2^52, 2^53) for normal values, q = biased exponent - 1075;
 * c < 2^52 and q = -1074 for subnormals):
 *
 *  1. Rounding interval. Every real in R = [v - 2^q/2, v + 2^q/2] reads back as v under
 *     round-to-nearest-even; the ends belong to R only when c is even. When c = 2^52 and the
 *     biased exponent is > 1 ("irregular" spacing) the lower half-gap is 2^q/4.
 *     With b = 4c: the ends are (b - 2) 2^(q-2) (irregular: b - 1) and (b + 2) 2^(q-2).
 *  2. Decimal scale. k = floor(log10(2^q)) (irregular: floor(log10(3/4 2^q))), so that R
 *     scaled by 10^-k has a width in [1, 10): it contains at least one integer and at most one
 *     multiple of 10.
 *  3. Candidates. Let s = floor(v 10^-k), t = s + 1. If exactly one of the multiples of ten
 *     10 floor(s/10), 10 floor(s/10) + 10 lies in the scaled R, it is the unique shortest
 *     decimal (any decimal with fewer digits than s is such a multiple). Otherwise the answer
 *     has the digits of s or t: the one in R, or, when both are, the nearer to v (ties: even).
 *  4. Exact comparisons from a 126-bit approximation. The scaled values are
 *     X = beta 2^q 10^-k (beta = b - 2, b - 1, b, b + 2). With 10^-k = G 2^(e - 125),
 *     e = floor(log2 10^-k), G in [2^125, 2^126), the table holds g = floor(G) + 1 and
 *     X is approximated by X' = g cp / 2^127 with cp = beta 2^h, h = q + e + 2 (h in [2, 5],
 *     cp < 2^61). X' is truncated to 63 fraction bits and the truncation is rounded to odd:
 *     r = floor(X') | (fraction of X' nonzero at 63 bits). Then r tells exactly whether X is an
 *     integer and compares with every even integer exactly as X does, because
 *       - X' - X = (g - G) cp / 2^127 < 2^-66;
 *       - when X is an integer N, g cp - N 2^127 = (g - G) cp < 2^64, so the 63-bit truncation
 *         of X' is exactly N (r = N);
 *       - otherwise X is at least 2^-62.54 away from every even integer: beta is even
 *         (b - 2, b, b + 2) with beta/2 <= 2^54 + 1, and by the best-approximation property
 *         of continued fractions (Lagrange; e.g. A. Ya. Khinchin, "Continued Fractions",
 *         ch. II - from memory) min ||j 2^q 10^-k|| over 1 <= j <= 2^54 + 1 is reached at the
 *         largest convergent denominator <= 2^54 + 1; computed exactly (Python fractions)
 *         for every q with the regular k, the smallest is 2^-63.54 (q = 164). In the
 *         irregular case (a single c = 2^52 per q, beta = b - 1, b, b + 2) each X that is
 *         not an integer stays more than 2^-13 away from every integer (same exact
 *         computation). Both margins exceed 2^-63 > X' - X.
 *         Near odd integers the rounded-to-odd r is the same whichever side X' falls.
 *     The comparisons are then done on integers: s in R  <=>  r_low + odd(c) <= 4 s, and
 *     t in R  <=>  4 t + odd(c) <= r_high, likewise for the multiples of ten; the tie between
 *     s and t compares r_mid with 4 s + 2.
 *
 * The log approximations are multiply-and-shift forms checked against exact integer
 * arithmetic over the whole exponent range by tests/unit/test_fmt_double.c, which also checks
 * every table entry with its own bignum arithmetic. Right shifts of negative ints are
 * arithmetic (floor), as on gcc and clang.
 *
 * The digits are then laid out as documented in fmt_double.h. */
#include <stdint.h>
#include <string.h>

#include "output/fmt_double.h"

__extension__ typedef unsigned __int128 fmt_u128;

#define POW10_MIN (-292) /* smallest m = -k in the table */
#define POW10_MAX 324

/* g(m) = floor(10^m 2^(125 - floor(log2 10^m))) + 1 for m = POW10_MIN ... POW10_MAX, as
 * {high 64 bits, low 64 bits}. Generated with exact rational arithmetic (Python fractions);
 * re-checked entry by entry by the unit test. */
static const uint64_t POW10_G[POW10_MAX - POW10_MIN + 1][2] = {
    {0x3fddec7f2faf3713U, 0xc97a3a2704eec3dfU},
    {0x27eab3cf7dcd826cU, 0x5dec645863153a6cU},
    {0x31e560c35d40e307U, 0x75677d6e7bda8906U},
    {0x3e5eb8f434911bc9U, 0x52c15cca1ad12b48U},
    {0x26fb3398a0dab15dU, 0xd3b8d9fe50c2bb0dU},
    {0x30ba007ec9115db5U, 0x48a7107de4f369d0U},
    {0x3ce8809e7b55b522U, 0x9ad0d49d5e304444U},
    {0x261150630d159135U, 0xa0c284e25ade2aabU},
    {0x2f95a47bd05af583U, 0x08f3261af195b555U},
    {0x3b7b0d9ac471b2e3U, 0xcb2fefa1adfb22abU},
    {0x252ce880bac70fceU, 0x5efdf5c50cbcf5abU},
    {0x2e7822a0e978d3c1U, 0xf6bd73364fec3315U},
    {0x3a162b4923d708b2U, 0x746cd003e3e73fdbU},
    {0x244ddb0db666656fU, 0x88c402026e7087e9U},
    {0x2d6151d123fffecbU, 0x6af502830a0ca9e3U},
    {0x38b9a6456cfffe7eU, 0x45b24323cc8fd45cU},
    {0x237407eb641fff0eU, 0xeb8f69f65fd9e4b9U},
    {0x2c5109e63d27fed2U, 0xa6734473f7d05de8U},
    {0x37654c5fcc71fe87U, 0x50101590f5c47561U},
    {0x229f4fbbdfc73f14U, 0x920a0d7a999ac95dU},
    {0x2b4723aad7b90ed9U, 0xb68c90d940017bb4U},
    {0x3618ec958da75290U, 0x242fb50f9001daa1U},
    {0x21cf93dd7888939aU, 0x169dd129ba0128a5U},
    {0x2a4378d4d6aab880U, 0x9c454574288172ceU},
    {0x34d4570a0c5566a0U, 0xc35696d132a1cf81U},
    {0x2104b66647b56024U, 0x7a161e42bfa521b1U},
    {0x2945e3ffd9a2b82dU, 0x989ba5d36f8e6a1dU},
    {0x33975cffd00b6638U, 0xfec28f484b7204a4U},
    {0x203e9a1fe2071fe3U, 0x9f39998d2f2742e7U},
    {0x284e40a7da88e7dcU, 0x8707fff07af113a1U},
    {0x3261d0d1d12b21d3U, 0xa8c9ffec99ad5889U},
    {0x3efa45064575ea48U, 0x92fc7fe7c018aeabU},
    {0x275c6b23eb69b26dU, 0x5bddcff0d80f6d2bU},
    {0x313385ece6441f08U, 0xb2d543ed0e134875U},
    {0x3d8067681fd526caU, 0xdf8a94e851981a93U},
    {0x267040a113e5383eU, 0xcbb69d1132ff109cU},
    {0x300c50c958de864eU, 0x7ea444557fbed4c3U},
    {0x3c0f64fbaf1627e2U, 0x1e4d556adfae89f3U},
    {0x25899f1d4d6dd8edU, 0x52f05562cbcd1638U},
    {0x2eec06e4a0c94f28U, 0xa7ac6abb7ec05bc6U},
    {0x3aa7089dc8fba2f2U, 0xd197856a5e7072b8U},
    {0x24a865629d9d45d7U, 0xc2feb3627b0647b3U},
    {0x2dd27ebb4504974dU, 0xb3be603b19c7d99fU},
    {0x39471e6a1645bd21U, 0x20adf849e039d007U},
    {0x23cc73024deb9634U, 0xb46cbb2e2c242205U},
    {0x2cbf8fc2e1667bc1U, 0xe187e9f9b72d2a86U},
    {0x37ef73b399c01ab2U, 0x59e9e47824f87527U},
    {0x22f5a850401810afU, 0x78322ecb171b4939U},
    {0x2bb31264501e14dbU, 0x563eba7ddce21b87U},
    {0x369fd6fd64259a12U, 0x2bce691d541aa268U},
    {0x2223e65e5e97804bU, 0x5b6101b25490a581U},
    {0x2aacdff5f63d605eU, 0x3239421ee9b4cee1U},
    {0x355817f373ccb875U, 0xbec792a6a422029aU},
    {0x21570ef8285ff349U, 0x973cbba8269541a0U},
    {0x29acd2b63277f01bU, 0xfd0bea92303a9208U},
    {0x34180763bf15ec22U, 0xfc4ee536bc49368aU},
    {0x208f049e576db395U, 0xddb14f4235adc217U},
    {0x28b2c5c5ed49207bU, 0x551da312c319329cU},
    {0x32df7737689b689aU, 0x2a650bd773df7f43U},
    {0x3f97550542c242c0U, 0xb4fe4ecd50d75f14U},
    {0x27be952349b969b8U, 0x711ef14052869b6cU},
    {0x31ae3a6c1c27c426U, 0x8d66ad9067284247U},
    {0x3e19c9072331b530U, 0x30c058f480f252d9U},
    {0x26d01da475ff113eU, 0x1e783798d09773c8U},
    {0x3084250d937ed58dU, 0xa616457f04bd50baU},
    {0x3ca52e50f85e8af1U, 0x0f9bd6dec5eca4e8U},
    {0x25e73cf29b3b16d6U, 0xa9c1664b3bb3e711U},
    {0x2f610c2f4209dc8cU, 0x5431bfde0aa0e0d5U},
    {0x3b394f3b128c53afU, 0x693e2fd58d49190bU},
    {0x2503d184eb97b44dU, 0xa1c6dde5784dafa7U},
    {0x2e44c5e6267da161U, 0x0a38955ed6611b90U},
    {0x39d5f75fb01d09b9U, 0x4cc6bab68bf96274U},
    {0x2425ba9bce122613U, 0xcffc34b2177bdd89U},
    {0x2d2f2942c196af98U, 0xc3fb41de9d5ad4ebU},
    {0x387af39371fc5b7eU, 0xf4fa125644b18a26U},
    {0x234cd83c273db92fU, 0x591c4b75eaeef658U},
    {0x2c200e4b310d277bU, 0x2f635e5365aab3edU},
    {0x372811ddfd507159U, 0xfb3c35e83f1560e9U},
    {0x22790b2abe5246d8U, 0x3d05a1b1276d5c92U},
    {0x2b174df56de6d88eU, 0x4c470a1d7148b3b6U},
    {0x35dd2172c9608eb1U, 0xdf58cca4cd9ae0a3U},
    {0x21aa34e7bddc592fU, 0x2b977fe70080cc66U},
    {0x2a14c221ad536f7aU, 0xf67d5fe0c0a0ff80U},
    {0x3499f2aa18a84b59U, 0xb41cb7d8f0c93f5fU},
    {0x20e037aa4f692f18U, 0x1091f2e7967dc79cU},
    {0x29184594e3437adeU, 0x14b66fa17c1d3983U},
    {0x335e56fa1c145995U, 0x99e40b89db2487e3U},
    {0x201af65c518cb7fdU, 0x802e873628f6d4eeU},
    {0x2821b3f365efe5fcU, 0xe03a2903b3348a2aU},
    {0x322a20f03f6bdf7cU, 0x1848b344a001acb4U},
    {0x3eb4a92c4f46d75bU, 0x1e5ae015c80217e1U},
    {0x2730e9bbb18c4698U, 0xf2f8cc0d9d014eedU},
    {0x30fd242a9def583fU, 0x2fb6ff110441a2a8U},
    {0x3d3c6d35456b2e4eU, 0xfba4bed545520b52U},
    {0x2645c4414b62fcf1U, 0x5d46f7454b534713U},
    {0x2fd735519e3bbc2dU, 0xb498b5169e2818d8U},
    {0x3bcd02a605caab39U, 0x21bee25c45b21f0eU},
    {0x256021a7c39eab03U, 0xb5174d79ab8f5369U},
    {0x2eb82a11b48655c4U, 0xa25d20d816732843U},
    {0x3a66349621a7eb35U, 0xcaf4690e1c0ff253U},
    {0x247fe0ddd508f301U, 0x9ed8c1a8d189f774U},
    {0x2d9fd9154a4b2fc2U, 0x068ef21305ec7551U},
    {0x3907cf5a9cddfbb2U, 0x8832ae97c76792a5U},
    {0x23a4e198a20abd4fU, 0x951fad1edca0bba8U},
    {0x2c8e19feca8d6ca3U, 0x7a67986693c8ea91U},
    {0x37b1a07e7d30c7ccU, 0x59017e8038bb2536U},
    {0x22cf044f0e3e7cdfU, 0xb7a0ef102374f742U},
    {0x2b82c562d1ce1c17U, 0xa5892ad42c523512U},
    {0x366376bb8641a31dU, 0x8eeb75893766c256U},
    {0x21fe2a3533e905f2U, 0x79532975c2a03976U},
    {0x2a7db4c280e3476fU, 0x17a7f3d3334847d4U},
    {0x351d21f3211c194aU, 0xdd91f0c8001a59c8U},
    {0x21323537f4b18fceU, 0xca7b367d0010781dU},
    {0x297ec285f1ddf3c2U, 0x7d1a041c40149625U},
    {0x33de73276e5570b3U, 0x1c6085235019bbaeU},
    {0x206b07f8a4f5666fU, 0xf1bc53361210154dU},
    {0x2885c9f6ce32c00bU, 0xee2b680396941aa0U},
    {0x32a73c7481bf700eU, 0xe9b642047c392148U},
    {0x3f510b91a22f4c12U, 0xa423d2859b476999U},
    {0x2792a73b055d8f8bU, 0xa6966393810ca200U},
    {0x31775109c6b4f36eU, 0x903bfc78614fca80U},
    {0x3dd5254c3862304aU, 0x344afb9679a3bd20U},
    {0x26a5374fa33d5e2eU, 0x60aedd3e0c065634U},
    {0x304e85238c0cb5b9U, 0xf8da948d8f07ebc1U},
    {0x3c62266c6f0fe328U, 0x771139b0f2c9e6b1U},
    {0x25bd5803c569edf9U, 0x4a6ac40e97be302fU},
    {0x2f2cae04b6c46977U, 0x9d0575123dadbc3aU},
    {0x3af7d985e47583d5U, 0x8446d256cd192b49U},
    {0x24dae7f3aec97265U, 0x72ac4376402fbb0eU},
    {0x2e11a1f09a7bcefeU, 0xcf575453d03ba9d1U},
    {0x39960a6cc11ac2beU, 0x832d2968c44a9445U},
    {0x23fdc683f8b0b9b7U, 0x11fc39e17aae9cabU},
    {0x2cfd3824f6dce824U, 0xd67b4859d95a43d6U},
    {0x383c862e3494222eU, 0x0c1a1a704fb0d4ccU},
    {0x2325d3dce0dc955cU, 0xc790508631ce84ffU},
    {0x2bef48d41913bab3U, 0xf97464a7be42263fU},
    {0x36eb1b091f58a960U, 0xf7d17dd1add2afcfU},
    {0x2252f0e5b39769dcU, 0x9ae2eea30ca3ade1U},
    {0x2ae7ad1f207d4453U, 0xc19baa4bcfcc995aU},
    {0x35a19866e89c9568U, 0xb20294dec3bfbfb0U},
    {0x2184ff405161dd61U, 0x6f419d0b3a57d7ceU},
    {0x29e63f1065ba54b9U, 0xcb12044e08edcdc2U},
    {0x345fced47f28e9e8U, 0x3dd685618b294132U},
    {0x20bbe144cf799231U, 0x26a6135cf6f9c8bfU},
    {0x28ead9960357f6bdU, 0x704f983434b83aefU},
    {0x33258ffb842df46cU, 0xcc637e4141e649abU},
    {0x3feef3fa65397187U, 0xff7c5dd1925fdc15U},
    {0x27f5587c7f43e6f4U, 0xffadbaa2fb7be98dU},
    {0x31f2ae9b9f14e0b2U, 0x3f99294bba5ae3f1U},
    {0x3e6f5a4286da18deU, 0xcf7f739ea8f19cedU},
    {0x2705986994484f8bU, 0x41afa84329970214U},
    {0x30c6fe83f95a636eU, 0x121b9253f3fcc299U},
    {0x3cf8be24f7b0fc49U, 0x96a276e8f0fbf33fU},
    {0x261b76d71ace9dadU, 0xfe258a51969d7808U},
    {0x2fa2548ce1824519U, 0x7daeece5fc44d609U},
    {0x3b8ae9b019e2d65fU, 0xdd1aa81f7b560b8cU},
    {0x2536d20e102dc5fbU, 0xea30a913ad15c738U},
    {0x2e8486919439377aU, 0xe4bcd358985b3905U},
    {0x3a25a835f9478559U, 0x9dec082ebe720746U},
    {0x24578921bbccb358U, 0x02b3851d3707448cU},
    {0x2d6d6b6a2abfe02eU, 0x0360666484c915afU},
    {0x38c8c644b56fd839U, 0x84387ffda5fb5b1bU},
    {0x237d7beaf165e723U, 0xf2a34ffe87bd18f1U},
    {0x2c5cdae5adbf60ecU, 0xef4c23fe29ac5f2dU},
    {0x3774119f192f3928U, 0x2b1f2cfdb41776f8U},
    {0x22a88b036fbd83b9U, 0x1af37c1e908eaa5bU},
    {0x2b52adc44bace4a7U, 0x61b05b2634b254f2U},
    {0x362759355e981dd1U, 0x3a1c71efc1deea2eU},
    {0x21d897c15b1f12a2U, 0xc451c735d92b525dU},
    {0x2a4ebdb1b1e6d74bU, 0x756639034f7626f4U},
    {0x34e26d1e1e608d1eU, 0x52bfc7442353b0b1U},
    {0x210d8432d2fc5832U, 0xf3b7dc8a96144e6fU},
    {0x2950e53f87bb6e3fU, 0xb0a5d3ad3b99620bU},
    {0x33a51e8f69aa49cfU, 0x9ccf48988a7fba8dU},
    {0x20473319a20a6e21U, 0xc2018d5f568fd498U},
    {0x2858ffe00a8d09aaU, 0x3281f0b72c33c9beU},
    {0x326f3fd80d304c14U, 0xbf226ce4f740bc2eU},
    {0x3f0b0fce107c5f19U, 0xeeeb081e3510eb39U},
    {0x2766e9e0ca4dbb70U, 0x3552e512e12a9304U},
    {0x3140a458fce12a4cU, 0x42a79e57997537c5U},
    {0x3d90cd6f3c1974dfU, 0x535185ed7fd285b6U},
    {0x267a8065858fe90bU, 0x9412f3b46fe39392U},
    {0x3019207ee6f3e34eU, 0x7917b0a18bdc7876U},
    {0x3c1f689ea0b0dc22U, 0x175d9cc9eed39694U},
    {0x2593a163246e8995U, 0x4e9a81fe35443e1cU},
    {0x2ef889bbed8a2bfaU, 0xa241227dc2954da3U},
    {0x3ab6ac2ae8ecb6f9U, 0x4ad16b1d333aa10cU},
    {0x24b22b9ad193f25bU, 0xcec2e2f24004a4a8U},
    {0x2ddeb68185f8eef2U, 0xc2739baed005cdd2U},
    {0x39566421e7772aafU, 0x7310829a84074146U},
    {0x23d5fe9530aa7aadU, 0xa7ea51a0928488ccU},
    {0x2ccb7e3a7cd51959U, 0x11e4e608b725aaffU},
    {0x37fe5dc91c0a5fafU, 0x565e1f8ae4ef15beU},
    {0x22fefa9db1867bcdU, 0x95fad3b6cf156d97U},
    {0x2bbeb9451de81ac0U, 0xfb7988a482dac8fdU},
    {0x36ae679665622171U, 0x3a57eacda3917b3cU},
    {0x222d00bdff5d54e6U, 0xc476f2c0863aed06U},
    {0x2ab840ed7f34aa20U, 0x7594af70a7c9a847U},
    {0x35665128df01d4a8U, 0x92f9db4cd1bc1258U},
    {0x215ff2b98b6124e9U, 0x5bdc291003158b77U},
    {0x29b7ef67ee396e23U, 0xb2d3335403daee55U},
    {0x3425eb41e9c7c9acU, 0x9f88002904d1a9eaU},
    {0x2097b309321cde0bU, 0xe3b50019a3030a33U},
    {0x28bd9fcb7ea4158eU, 0xdca240200bc3ccbfU},
    {0x32ed07be5e4d1af2U, 0x93cad0280eb4bfefU},
    {0x3fa849adf5e061afU, 0x38bd84321261efebU},
    {0x27c92e0cb9ac3d0dU, 0x8376729f4b7d35f3U},
    {0x31bb798fe8174c50U, 0xe4540f471e5c836fU},
    {0x3e2a57f3e21d1f65U, 0x1d691318e5f3a44bU},
    {0x26da76f86d52339fU, 0x3261abef8fb846afU},
    {0x309114b688a6c086U, 0xfefa16eb73a6585bU},
    {0x3cb559e42ad070a8U, 0xbeb89ca6508fee71U},
    {0x25f1582e9ac24669U, 0x773361e7f259f507U},
    {0x2f6dae3a4172d803U, 0xd5003a61eef07249U},
    {0x3b4919c8d1cf8e04U, 0xca4048fa6aac8edbU},
    {0x250db01d8321b8c2U, 0xfe682d9c82abd949U},
    {0x2e511c24e3ea26f3U, 0xbe023903a356cf9bU},
    {0x39e5632e1ce4b0b0U, 0xad82c7448c2c8382U},
    {0x242f5dfcd20eee6eU, 0x6c71bc8ad79bd231U},
    {0x2d3b357c0692aa0aU, 0x078e2bad8d82c6bdU},
    {0x388a02db0837548cU, 0x8971b698f0e3786dU},
    {0x235641c8e52294d7U, 0xd5e7121f968e2b44U},
    {0x2c2bd23b1e6b3a0dU, 0xcb60d6a77c31b615U},
    {0x3736c6c9e6060891U, 0x3e390c515b3e239aU},
    {0x22823c3e2fc3c55aU, 0xc6e3a7b2d906d640U},
    {0x2b22cb4dbbb4b6b1U, 0x789c919f8f488bd0U},
    {0x35eb7e212aa1e45dU, 0xd6c3b607731aaec4U},
    {0x21b32ed4baa52ebaU, 0xa63a51c4a7f0ad3bU},
    {0x2a1ffa89e94e7a69U, 0x4fc8e635d1ecd88aU},
    {0x34a7f92c63a21903U, 0xa3bb1fc346680eacU},
    {0x20e8fbbbbe454fa2U, 0x4654f3da0c01092cU},
    {0x29233aaaadd6a38aU, 0xd7ea30d08f014b76U},
    {0x336c0955594c4c6dU, 0x8de4bd04b2c19e54U},
    {0x202385d557cfafc4U, 0x78aef622efb902f5U},
    {0x282c674aadc39bb5U, 0x96dab3ababa743b2U},
    {0x3237811d593482a2U, 0xfc9160969691149eU},
    {0x3ec56164af81a34bU, 0xbbb5b8bc3c3559c5U},
    {0x273b5cdeedb1060fU, 0x55519375a5a1581bU},
    {0x310a3416a91d4793U, 0x2aa5f8530f09ae22U},
    {0x3d4cc11c53649977U, 0xf54f7667d2cc19abU},
    {0x264ff8b1b41edfeaU, 0xf951aa00e3bf900bU},
    {0x2fe3f6de212697e5U, 0xb7a614811caf740dU},
    {0x3bdcf495a9703ddfU, 0x258f99a163db5111U},
    {0x256a18dd89e626abU, 0x7779c004de6912abU},
    {0x2ec49f14ec5fb056U, 0x5558300616035755U},
    {0x3a75c6da27779c6bU, 0xeaae3c079b842d2aU},
    {0x24899c4858aac1c3U, 0x72ace584c1329c3bU},
    {0x2dac035a6ed57234U, 0x4f581ee5f17f4349U},
    {0x391704310a8acec1U, 0x632e269f6ddf141bU},
    {0x23ae629ea696c138U, 0xddfcd823a4ab6c91U},
    {0x2c99fb46503c7187U, 0x157c0e2c8dd647b5U},
    {0x37c07a17e44b8de8U, 0xdadb11b7b14bd9a3U},
    {0x22d84c4eeeaf38b1U, 0x88c8eb12cecf6806U},
    {0x2b8e5f62aa5b06ddU, 0xeafb25d782834207U},
    {0x3671f73b54f1c895U, 0x65b9ef4d63241289U},
    {0x22073a8515171d5dU, 0x5f9435905df68b96U},
    {0x2a8909265a5ce4b4U, 0xb77942f475742e7bU},
    {0x352b4b6ff0f41de1U, 0xe55793b192d13a1aU},
    {0x213b0f25f69892adU, 0x2f56bc4efbc2c450U},
    {0x2989d2ef743eb758U, 0x7b2c6b62bab37564U},
    {0x33ec47ab514e652eU, 0x99f7863b696052bdU},
    {0x2073accb12d0ff3dU, 0x203ab3e521dc33b6U},
    {0x289097fdd7853f0cU, 0x684960de6a5340a4U},
    {0x32b4bdfd4d668ecfU, 0x825bb91604e810cdU},
    {0x3f61ed7ca0c03283U, 0x62f2a75b86221500U},
    {0x279d346de4781f92U, 0x1dd7a89933d54d20U},
    {0x318481895d962776U, 0xa54d92bf80caa068U},
    {0x3de5a1ebb4fbb154U, 0x4ea0f76f60fd4882U},
    {0x26af8533511d4ed4U, 0xb1249aa59c9e4d51U},
    {0x305b66802564a289U, 0xdd6dc14f03c5e0a5U},
    {0x3c7240202ebdcb2cU, 0x54c931a2c4b758cfU},
    {0x25c768141d369efbU, 0xb4fdbf05baf29781U},
    {0x2f394219248446baU, 0xa23d2ec729af3d62U},
    {0x3b07929f6da55869U, 0x4acc7a78f41b0cbaU},
    {0x24e4bba3a4875741U, 0xcebfcc8b9890e7f4U},
    {0x2e1dea8c8da92d12U, 0x426fbfae7eb521f1U},
    {0x39a5652fb1137856U, 0xd30baf9a1e626a6dU},
    {0x24075f3dceac2b36U, 0x43e74dc052fd8285U},
    {0x2d09370d42573603U, 0xd4e1213067bce326U},
    {0x384b84d092ed0384U, 0xca19697c81ac1befU},
    {0x232f33025bd42232U, 0xfe4fe1edd10b9175U},
    {0x2bfaffc2f2c92abfU, 0xbde3da69454e75d3U},
    {0x36f9bfb3af7b756fU, 0xad5cd10396a21347U},
    {0x225c17d04dad2965U, 0xcc5a02a23e254c0dU},
    {0x2af31dc4611873bfU, 0x3f70834acdae9f10U},
    {0x35afe535795e90afU, 0x0f4ca41d811a46d4U},
    {0x218def416bdb1a6dU, 0x698fe69270b06c44U},
    {0x29f16b11c6d1e108U, 0xc3f3e0370cdc8755U},
    {0x346dc5d63886594aU, 0xf4f0d844d013a92bU},
    {0x20c49ba5e353f7ceU, 0xd916872b020c49bbU},
    {0x28f5c28f5c28f5c2U, 0x8f5c28f5c28f5c29U},
    {0x3333333333333333U, 0x3333333333333334U},
    {0x2000000000000000U, 0x0000000000000001U},
    {0x2800000000000000U, 0x0000000000000001U},
    {0x3200000000000000U, 0x0000000000000001U},
    {0x3e80000000000000U, 0x0000000000000001U},
    {0x2710000000000000U, 0x0000000000000001U},
    {0x30d4000000000000U, 0x0000000000000001U},
    {0x3d09000000000000U, 0x0000000000000001U},
    {0x2625a00000000000U, 0x0000000000000001U},
    {0x2faf080000000000U, 0x0000000000000001U},
    {0x3b9aca0000000000U, 0x0000000000000001U},
    {0x2540be4000000000U, 0x0000000000000001U},
    {0x2e90edd000000000U, 0x0000000000000001U},
    {0x3a35294400000000U, 0x0000000000000001U},
    {0x246139ca80000000U, 0x0000000000000001U},
    {0x2d79883d20000000U, 0x0000000000000001U},
    {0x38d7ea4c68000000U, 0x0000000000000001U},
    {0x2386f26fc1000000U, 0x0000000000000001U},
    {0x2c68af0bb1400000U, 0x0000000000000001U},
    {0x3782dace9d900000U, 0x0000000000000001U},
    {0x22b1c8c1227a0000U, 0x0000000000000001U},
    {0x2b5e3af16b188000U, 0x0000000000000001U},
    {0x3635c9adc5dea000U, 0x0000000000000001U},
    {0x21e19e0c9bab2400U, 0x0000000000000001U},
    {0x2a5a058fc295ed00U, 0x0000000000000001U},
    {0x34f086f3b33b6840U, 0x0000000000000001U},
    {0x2116545850052128U, 0x0000000000000001U},
    {0x295be96e64066972U, 0x0000000000000001U},
    {0x33b2e3c9fd0803ceU, 0x8000000000000001U},
    {0x204fce5e3e250261U, 0x1000000000000001U},
    {0x2863c1f5cdae42f9U, 0x5400000000000001U},
    {0x327cb2734119d3b7U, 0xa900000000000001U},
    {0x3f1bdf10116048a5U, 0x9340000000000001U},
    {0x27716b6a0adc2d67U, 0x7c08000000000001U},
    {0x314dc6448d9338c1U, 0x5b0a000000000001U},
    {0x3da137d5b0f806f1U, 0xb1cc800000000001U},
    {0x2684c2e58e9b0457U, 0x0f1fd00000000001U},
    {0x3025f39ef241c56cU, 0xd2e7c40000000001U},
    {0x3c2f7086aed236c8U, 0x07a1b50000000001U},
    {0x259da6542d43623dU, 0x04c5112000000001U},
    {0x2f050fe938943accU, 0x45f6556800000001U},
    {0x3ac653e386b9497fU, 0x5773eac200000001U},
    {0x24bbf46e3433cdefU, 0x96a872b940000001U},
    {0x2deaf189c140c16bU, 0x7c528f6790000001U},
    {0x3965adec3190f1c6U, 0x5b67334174000001U},
    {0x23df8cb39efa971bU, 0xf9208008e8800001U},
    {0x2cd76fe086b93ce2U, 0xf768a00b22a00001U},
    {0x380d4bd8a8678c1bU, 0xb542c80deb480001U},
    {0x23084f676940b791U, 0x5149bd08b30d0001U},
    {0x2bca63414390e575U, 0xa59c2c4adfd04001U},
    {0x36bcfc1194751ed3U, 0x0f03375d97c45001U},
    {0x22361d8afcc93343U, 0xe962029a7edab201U},
    {0x2ac3a4edbbfb8014U, 0xe3ba83411e915e81U},
    {0x35748e292afa601aU, 0x1ca924116635b621U},
    {0x2168d8d9badc7c10U, 0x51e9b68adfe191d5U},
    {0x29c30f1029939b14U, 0x6664242d97d9f64aU},
    {0x3433d2d433f881d9U, 0x7ffd2d38fdd073dcU},
    {0x20a063c4a07b5127U, 0xeffe3c439ea2486aU},
    {0x28c87cb5c89a2571U, 0xebfdcb54864ada84U},
    {0x32fa9be33ac0aeceU, 0x66fd3e29a7dd9125U},
    {0x3fb942dc0970da82U, 0x00bc8db411d4f56eU},
    {0x27d3c9c985e68891U, 0x4075d8908b251965U},
    {0x31c8bc3be7602ab5U, 0x90934eb4adee5fbeU},
    {0x3e3aeb4ae1383562U, 0xf4b82261d969f7adU},
    {0x26e4d30eccc3215dU, 0xd8f3157d27e23accU},
    {0x309e07d27ff3e9b5U, 0x4f2fdadc71dac97fU},
    {0x3cc589c71ff0e422U, 0xa2fbd1938e517bdfU},
    {0x25fb761c73f68e95U, 0xa5dd62fc38f2ed6cU},
    {0x2f7a53a390f4323bU, 0x0f54bbbb472fa8c6U},
    {0x3b58e88c75313ec9U, 0xd329eaaa18fb92f8U},
    {0x25179157c93ec73eU, 0x23fa32aa4f9d3bdbU},
    {0x2e5d75adbb8e790dU, 0xacf8bf54e3848ad2U},
    {0x39f4d3192a721751U, 0x1836ef2a1c65ad86U},
    {0x243903efba874e92U, 0xaf22557a51bf8c74U},
    {0x2d4744eba9292237U, 0x5aeaead8e62f6f91U},
    {0x3899162693736ac5U, 0x31a5a58f1fbb4b75U},
    {0x235fadd81c2822bbU, 0x3f07877973d50f29U},
    {0x2c37994e23322b6aU, 0x0ec96957d0ca52f3U},
    {0x37457fa1abfeb644U, 0x927bc3adc4fce7b0U},
    {0x228b6fc50b7f31eaU, 0xdb8d5a4c9b1e10ceU},
    {0x2b2e4bb64e5efe65U, 0x9270b0dfc1e59502U},
    {0x35f9dea3e1f6bdfeU, 0xf70cdd17b25efa42U},
    {0x21bc2b266d3a36bfU, 0x5a680a2ecf7b5c69U},
    {0x2a2b35f00888c46fU, 0x31020cba835a3384U},
    {0x34b6036c0aaaf58aU, 0xfd428fe92430c065U},
    {0x20f1c22386aad976U, 0xde4999f1b69e783fU},
    {0x292e32ac68558fd4U, 0x95dc006e2446164fU},
    {0x3379bf57826af3c9U, 0xbb530089ad579be2U},
    {0x202c1796b182d85eU, 0x1513e0560c56c16eU},
    {0x28371d7c5de38e75U, 0x9a58d86b8f6c71c9U},
    {0x3244e4db755c7213U, 0x00ef0e8673478e3bU},
    {0x3ed61e1252b38e97U, 0xc12ad228101971c9U},
    {0x2745d2cb73b0391eU, 0xd8bac3590a0fe71eU},
    {0x3117477e509c4766U, 0x8ee9742f4c93e0e6U},
    {0x3d5d195de4c35940U, 0x32a3d13b1fb8d91fU},
    {0x265a2fdaaefa17c8U, 0x1fa662c4f3d387b3U},
    {0x2ff0bbd15ab89dbaU, 0x278ffb7630c869a0U},
    {0x3beceac5b166c528U, 0xb173fa53bcfa8408U},
    {0x257412bb8ee03b39U, 0x6ee87c74561c9285U},
    {0x2ed1176a72984a07U, 0xcaa29b916ba3b726U},
    {0x3a855d450f3e5c89U, 0xbd4b4275c68ca4f0U},
    {0x24935a4b2986f9d6U, 0x164f09899c17e716U},
    {0x2db830ddf3e8b84bU, 0x9be2cbec031de0dcU},
    {0x39263d1570e2e65eU, 0x82db7ee703e55912U},
    {0x23b7e62d668dcffbU, 0x11c92f50626f57acU},
    {0x2ca5dfb8c03143f9U, 0xd63b7b247b0b2d96U},
    {0x37cf57a6f03d94f8U, 0x4bca59ed99cdf8fcU},
    {0x22e196c856267d1bU, 0x2f5e78348020bb9eU},
    {0x2b99fc7a6bb01c61U, 0xfb361641a028ea85U},
    {0x36807b99069c237aU, 0x7a039bd208332526U},
    {0x22104d3fa421962cU, 0x8c424163451ff738U},
    {0x2a94608f8d29fbb7U, 0xaf52d1bc1667f506U},
    {0x353978b370747aa5U, 0x9b27862b1c01f247U},
    {0x2143eb702648cca7U, 0x80f8b3daf181376dU},
    {0x2994e64c2fdaffd1U, 0x6136e0d1ade18548U},
    {0x33fa1fdf3bd1bfc5U, 0xb98499061959e699U},
    {0x207c53eb856317dbU, 0x93f2dfa3cfd83020U},
    {0x289b68e666bbddd2U, 0x78ef978cc3ce3c28U},
    {0x32c24320006ad547U, 0x172b7d6ff4c1cb32U},
    {0x3f72d3e800858a98U, 0xdcf65ccbf1f23dfeU},
    {0x27a7c4710053769fU, 0x8a19f9ff773766bfU},
    {0x3191b58d40685447U, 0x6ca0787f5505406fU},
    {0x3df622f090826959U, 0x47c8969f2a46908aU},
    {0x26b9d5d65a5181d7U, 0xccdd5e237a6c1a57U},
    {0x30684b4bf0e5e24dU, 0xc014b5ac590720ecU},
    {0x3c825e1eed1f5ae1U, 0x3019e3176f48e927U},
    {0x25d17ad3543398ccU, 0xbe102deea58d91b9U},
    {0x2f45d98829407effU, 0xed94396a4ef0f627U},
    {0x3b174fea33909ebfU, 0xe8f947c4e2ad33b0U},
    {0x24ee91f2603a6337U, 0xf19bccdb0dac404eU},
    {0x2e2a366ef848fc05U, 0xee02c011d1175062U},
    {0x39b4c40ab65b3b07U, 0x69837016455d247aU},
    {0x2410fa86b1f904e4U, 0xa1f2260deb5a36ccU},
    {0x2d1539285e77461dU, 0xca6eaf916630c47fU},
    {0x385a8772761517a5U, 0x3d0a5b75bfbcf59fU},
    {0x233894a789cd2ec7U, 0x4626792997d61984U},
    {0x2c06b9d16c407a79U, 0x17b01773fdcb9fe4U},
    {0x37086845c7509917U, 0x5d9c1d50fd3e87ddU},
    {0x2265412b9c925faeU, 0x9a8192529e4714ebU},
    {0x2afe917683b6f79aU, 0x4121f6e745d8da25U},
    {0x35be35d424a4b580U, 0xd16a74a1174f10aeU},
    {0x2196e1a496e6f170U, 0x82e288e4ae916a6dU},
    {0x29fc9a0dbca0adccU, 0xa39b2b1dda35c508U},
    {0x347bc0912bc8d93fU, 0xcc81f5e550c3364aU},
    {0x20cd585abb5d87c7U, 0xdfd139af527a01efU},
    {0x2900ae716a34e9b9U, 0xd7c5881b2718826aU},
    {0x3340da0dc4c22428U, 0x4db6ea21f0dea304U},
    {0x200888489af95699U, 0x30925255368b25e3U},
    {0x280aaa5ac1b7ac3fU, 0x7cb6e6ea842def5cU},
    {0x320d54f17225974fU, 0x5be4a0a525396b32U},
    {0x3e90aa2dceaefd23U, 0x32ddc8ce6e87c5ffU},
    {0x271a6a5ca12d5e35U, 0xffca9d810514dbbfU},
    {0x30e104f3c978b5c3U, 0x7fbd44e1465a12afU},
    {0x3d194630bbd6e334U, 0x5fac961997f0975bU},
    {0x262fcbde75664e00U, 0xbbcbddcffef65e99U},
    {0x2fbbbed612bfe180U, 0xeabed543feb3f63fU},
    {0x3baaae8b976fd9e1U, 0x256e8a94fe60f3cfU},
    {0x254aad173ea5e82cU, 0xb765169d1efc9861U},
    {0x2e9d585d0e4f6237U, 0xe53e5c4466bbbe7aU},
    {0x3a44ae7451e33ac5U, 0xde8df355806aae18U},
    {0x246aed08b32e04bbU, 0xab18b8157042accfU},
    {0x2d85a84adff985eaU, 0x95dee61acc535803U},
    {0x38e7125d97f7e765U, 0x3b569fa17f682e03U},
    {0x23906b7a7efaf09fU, 0x451623c4efa11cc2U},
    {0x2c7486591eb9acc7U, 0x165bacb62b8963f3U},
    {0x3791a7ef666817f8U, 0xdbf297e3b66bbcefU},
    {0x22bb08f5a0010efbU, 0x89779eee52035616U},
    {0x2b69cb33080152baU, 0x6bd586a9e6842b9bU},
    {0x36443dffca01a769U, 0x06cae85460253682U},
    {0x21eaa6bfde4108a1U, 0xa43ed134bc174211U},
    {0x2a65506fd5d14acaU, 0x0d4e8581eb1d1295U},
    {0x34fea48bcb459d7cU, 0x90a226e265e4573bU},
    {0x211f26d75f0b826dU, 0xda65584d7faeb685U},
    {0x2966f08d36ce6309U, 0x50feae60df9a6426U},
    {0x33c0acb08481fbcbU, 0xa53e59f91780fd2fU},
    {0x20586bee52d13d5fU, 0x4746f83baeb09e3eU},
    {0x286e86e9e7858cb7U, 0x1918b64a9a5cc5cdU},
    {0x328a28a46166efe4U, 0xdf5ee3dd40f3f740U},
    {0x3f2cb2cd79c0abdeU, 0x17369cd49130f510U},
    {0x277befc06c186b6aU, 0xce822204dabe992aU},
    {0x315aebb0871e8645U, 0x8222aa86116e3f75U},
    {0x3db1a69ca8e627d6U, 0xe2ab552795c9cf52U},
    {0x268f0821e98fd8e6U, 0x4dab1538bd9e2193U},
    {0x3032ca2a63f3cf1fU, 0xe115da86ed05a9f8U},
    {0x3c3f7cb4fcf0c2e7U, 0xd95b5128a8471476U},
    {0x25a7adf11e1679d0U, 0xe7d912b9692c6ccaU},
    {0x2f11996d659c1845U, 0x21cf5767c37787fcU},
    {0x3ad5ffc8bf031e56U, 0x6a432d41b45569fbU},
    {0x24c5bfdd7761f2f6U, 0x0269fc4910b5623dU},
    {0x2df72fd4d53a6fb3U, 0x83047b5b54e2baccU},
    {0x3974fbca0a890ba0U, 0x63c59a322a1b697fU},
    {0x23e91d5e4695a744U, 0x3e5b805f5a5121f0U},
    {0x2ce364b5d83b1115U, 0x4df2607730e56a6cU},
    {0x381c3de34e49d55aU, 0xa16ef894fd1ec506U},
    {0x2311a6ae10ee2558U, 0xa4e55b5d1e333b24U},
    {0x2bd610599529aeaeU, 0xce1eb23465c009edU},
    {0x36cb946ffa741a5aU, 0x81a65ec17f300c68U},
    {0x223f3cc5fc889078U, 0x9107fb38ef7e07c1U},
    {0x2acf0bf77baab496U, 0xb549fa072b5d89b1U},
    {0x3582cef55a9561bcU, 0x629c7888f634ec1eU},
    {0x2171c159589d5d15U, 0xbda1cb5599e11393U},
    {0x29ce31afaec4b45bU, 0x2d0a3e2b00595877U},
    {0x3441be1b9a75e171U, 0xf84ccdb5c06fae95U},
    {0x20a916d14089ace7U, 0x3b3000919845cd1dU},
    {0x28d35c8590ac1821U, 0x09fc00b5fe574065U},
    {0x330833a6f4d71e29U, 0x4c7b00e37ded107eU},
    {0x3fca4090b20ce5b3U, 0x9f99c11c5d68549dU},
    {0x27de685a6f480f90U, 0x43c018b1ba6134e2U},
    {0x31d602710b1a1374U, 0x54b01ede28f9821bU},
    {0x3e4b830d4de09851U, 0x69dc2695b337e2a1U},
    {0x26ef31e850ac5f32U, 0xe229981d9002eda5U},
    {0x30aafe6264d776ffU, 0x9ab3fe24f403a90eU},
    {0x3cd5bdfafe0d54bfU, 0x8160fdae31049351U},
    {0x260596bcdec854f7U, 0xb0dc9e8cdea2dc13U},
    {0x2f86fc6c167a6a35U, 0x9d13c630164b9318U},
    {0x3b68bb871c1904c3U, 0x0458b7bc1bde77ddU},
    {0x25217534718fa2f9U, 0xe2b772d5916b0aebU},
    {0x2e69d2818df38bb8U, 0x5b654f8af5c5cda5U},
    {0x3a044721f1706ea6U, 0x723ea36db337410eU},
    {0x2442ac7536e64528U, 0x07672624900288a9U},
    {0x2d535792849fd672U, 0x0940efadb4032ad3U},
    {0x38a82d7725c7cc0eU, 0x8b912b992103f588U},
    {0x23691c6a779cdf89U, 0x173abb3fb4a27975U},
    {0x2c4363851584176bU, 0x5d096a0fa1cb17d2U},
    {0x37543c665ae51d46U, 0x344bc4938a3dddc7U},
    {0x2294a5bff8cf324bU, 0xe0af5adc3666aa9cU},
    {0x2b39cf2ff702fedeU, 0xd8db319344005543U},
    {0x360842fbf4c3be96U, 0x8f11fdf815006a94U},
    {0x21c529dd78fa571eU, 0x196b3ebb0d20429dU},
    {0x2a367454d738ece5U, 0x9fc60e69d0685344U},
    {0x34c4116a0d07281fU, 0x07b7920444826815U},
    {0x20fa8ae248247913U, 0x64d2bb42aad1810dU},
    {0x29392d9ada2d9758U, 0x3e076a135585e150U},
    {0x3387790190b8fd2eU, 0x4d8944982ae759a4U},
    {0x2034aba0fa739e3cU, 0xf075cadf1ad09807U},
    {0x2841d689391085ccU, 0x2c933d96e184be08U},
    {0x32524c2b8754a73fU, 0x37b80cfc99e5ed8aU},
    {0x3ee6df366929d10fU, 0x05a6103bc05f68edU},
    {0x27504b8201ba22a9U, 0x6387ca25583ba194U},
    {0x31245e628228ab53U, 0xbc69bcaeae4a89f9U},
    {0x3d6d75fb22b2d628U, 0xab842bda59dd2c77U},
    {0x266469bcf5afc5d9U, 0x6b329b68782a3bcbU},
    {0x2ffd842c331bb74fU, 0xc5ff42429634cabdU},
    {0x3bfce5373fe2a523U, 0xb77f12d33bc1fd6dU},
    {0x257e0f4287eda736U, 0x52af6bc405593e64U},
    {0x2edd931329e91103U, 0xe75b46b506af8dfdU},
    {0x3a94f7d7f4635544U, 0xe1321862485b717cU},
    {0x249d1ae6f8be154bU, 0x0cbf4f3d6d3926eeU},
    {0x2dc461a0b6ed9a9dU, 0xcfef230cc88770a9U},
    {0x39357a08e4a90145U, 0x43eaebcffaa94cd3U},
    {0x23c16c458ee9a0cbU, 0x4a72d361fca9d004U},
    {0x2cb1c756f2a408feU, 0x1d0f883a7bd44405U},
    {0x37de392caf4d0b3dU, 0xa4536a491ac95506U},
    {0x22eae3bbed902706U, 0x86b4226db0bdd524U},
    {0x2ba59caae8f430c8U, 0x28612b091ced4a6dU},
    {0x368f03d5a3313cfaU, 0x327975cb64289d08U},
    {0x2219626585fec61cU, 0x5f8be99f1e996225U},
    {0x2a9fbafee77e77a3U, 0x776ee406e63fbaaeU},
    {0x3547a9bea15e158cU, 0x554a9d089fcfa95aU},
    {0x214cca1724dacd77U, 0xb54ea22563e1c9d8U},
    {0x299ffc9cee1180d5U, 0xa2a24aaebcda3c4eU},
    {0x3407fbc42995e10bU, 0x0b4add5a6c10cb62U},
    {0x2084fd5a99fdaca6U, 0xe70eca58838a7f1dU},
    {0x28a63cb1407d17d0U, 0xa0d27ceea46d1ee4U},
    {0x32cfcbdd909c5dc4U, 0xc9071c2a4d88669dU},
    {0x3f83bed4f4c37535U, 0xfb48e334e0ea8045U},
    {0x27b2574518fa2941U, 0xbd0d8e010c92902bU},
    {0x319eed165f38b392U, 0x2c50f1814fb73436U},
    {0x3e06a85bf706e076U, 0xb7652de1a3a50143U},
    {0x26c429397a644c4aU, 0x329f3cad064720caU},
    {0x30753387d8fd5f5cU, 0xbf470bd847d8e8fdU},
    {0x3c928069cf3cb733U, 0xef18cece59cf233cU},
    {0x25db90422185f280U, 0x756f8140f8217605U},
    {0x2f527452a9e76f20U, 0x92cb61913629d387U},
    {0x3b27116754614ae8U, 0xb77e39f583b44868U},
    {0x24f86ae094bcced1U, 0x72aee4397250ad41U},
    {0x2e368598b9ec0285U, 0xcf5a9d47cee4d891U},
    {0x39c426fee8670327U, 0x43314499c29e0eb6U},
    {0x241a985f514061f8U, 0x89fecae019a2c932U},
    {0x2d213e7725907a76U, 0xac7e7d98200b7b7eU},
    {0x38698e14eef49914U, 0x579e1cfe280e5a5dU},
    {0x2341f8cd1558dfacU, 0xb6c2d21ed908f87bU},
    {0x2c1277005aaf1797U, 0xe47386a68f4b3699U},
    {0x371714c0715add7dU, 0xdd906850331e043fU},
    {0x226e6cf846d8ca6eU, 0xaa7a41321ff2c2a8U},
    {0x2b0a0836588efd0aU, 0x5518d17ea7ef7352U},
    {0x35cc8a43eeb2bc4cU, 0xea5f05de51eb5026U},
    {0x219fd66a752fb5b0U, 0x127b63aaf3331218U},
    {0x2a07cc05127ba31cU, 0x171a3c95afffd69eU},
    {0x3489bf06571a8be3U, 0x1ce0cbbb1bffcc45U},
    {0x20d61763f670976dU, 0xf20c7f54f17fdfabU},
    {0x290b9d3cf40cbd49U, 0x6e8f9f2a2ddfd796U},
    {0x334e848c310fec9bU, 0xca3386f4b957cd7bU},
    {0x201112d79ea9f3e1U, 0x5e603458f3d6e06dU},
    {0x2815578d865470d9U, 0xb5f8416f30cc9888U},
    {0x321aad70e7e98d10U, 0x237651cafcffbeaaU},
    {0x3ea158cd21e3f054U, 0x2c53e63dbc3fae55U},
    {0x2724d780352e7634U, 0x9bb46fe695a7ccf5U},
    {0x30ee0d60427a13c1U, 0xc2a18be03b11c033U},
    {0x3d2990b8531898b2U, 0x3349eed849d6303fU},
    {0x2639fa7333ef5f6fU, 0x600e35472e25de28U},
    {0x2fc8791000eb374bU, 0x3811c298f9af55b1U},
    {0x3bba97540126051eU, 0x0616333f381b2b1eU},
    {0x25549e9480b7c332U, 0xc3cde0078310faf3U},
    {0x2ea9c639a0e5b3ffU, 0x74c1580963d539afU},
    {0x3a5437c8091f20ffU, 0x51f1ae0bbcca881bU},
    {0x2474a2dd05b3749fU, 0x93370cc755fe9511U},
    {0x2d91cb94472051c7U, 0x7804cff92b7e3a55U},
    {0x38f63e7958e86639U, 0x560603f7765dc8eaU},
    {0x2399e70bd7913fe3U, 0xd5c3c27aa9fa9d93U},
    {0x2c8060cecd758fdcU, 0xcb34b319547944f7U},
    {0x37a0790280d2f3d3U, 0xfe01dfdfa9979635U},
    {0x22c44ba19083d864U, 0x7ec12bebc9febde1U},
    {0x2b755e89f4a4ce7dU, 0x9e7176e6bc7e6d59U},
    {0x3652b62c71ce021dU, 0x060dd4a06b9e08b0U},
    {0x21f3b1dbc720c152U, 0x23c8a4e44342c56eU},
    {0x2a709e52b8e8f1a6U, 0xacbace1d541376c9U},
    {0x350cc5e767232e10U, 0x57e981a4a918547bU},
    {0x2127fbb0a075fccaU, 0x36f1f106e9af34cdU},
    {0x2971fa9cc8937bfcU, 0xc4ae6d48a41b0201U},
    {0x33ce7943fab85afbU, 0xf5da089acd21c281U},
    {0x20610bca7cb338ddU, 0x79a84560c0351991U},
    {0x28794ebd1be00714U, 0xd81256b8f0425ff5U},
    {0x3297a26c62d808daU, 0x0e16ec672c52f7f2U},
    {0x3f3d8b077b8e0b10U, 0x919ca780f767b5eeU},
    {0x278676e4ad38c6eaU, 0x5b01e8b09aa0d1b5U},
};

/* floor(log10(2^q)), exact for -1074 <= q <= 971 (checked by the unit test) */
static inline int flog10_pow2(int q)
{
    return (q * 315653) >> 20;
}

/* floor(log10(3/4 2^q)), exact for -1073 <= q <= 971 (checked by the unit test) */
static inline int flog10_3q_pow2(int q)
{
    return (q * 315653 - 131072) >> 20;
}

/* floor(log2(10^m)), exact for -292 <= m <= 324 (checked by the unit test) */
static inline int flog2_pow10(int m)
{
    return (m * 1741647) >> 19;
}

/* floor(g cp / 2^127) with the low bit set when the fraction, truncated to 63 bits, is not
 * zero (g = gh 2^64 + gl < 2^126, cp < 2^61). */
static inline uint64_t round_odd(const uint64_t g[2], uint64_t cp)
{
    fmt_u128 p = (fmt_u128)g[0] * cp + (((fmt_u128)g[1] * cp) >> 64);
    uint64_t frac = (uint64_t)p & (((uint64_t)1 << 63) - 1);
    return (uint64_t)(p >> 63) | (frac != 0);
}

/* Shortest decimal d 10^k in the rounding interval of c 2^q (c > 0). d < 10^17; a result
 * taken from the multiples of ten is returned divided by ten (*k adjusted), so only those
 * can carry further trailing zeros; *more_zeros says which case it was. */
static uint64_t to_decimal(uint64_t c, int q, int irregular, int *k_out, int *more_zeros)
{
    uint64_t out = c & 1; /* odd c: the interval's ends are excluded */
    uint64_t cb = c << 2, cbr = cb + 2, cbl;
    int k;
    if (irregular) {
        cbl = cb - 1;
        k = flog10_3q_pow2(q);
    } else {
        cbl = cb - 2;
        k = flog10_pow2(q);
    }
    int h = q + flog2_pow10(-k) + 2;
    const uint64_t *g = POW10_G[-k - POW10_MIN];
    uint64_t vb = round_odd(g, cb << h);
    uint64_t vbl = round_odd(g, cbl << h);
    uint64_t vbr = round_odd(g, cbr << h);

    uint64_t s = vb >> 2;
    uint64_t s10 = s / 10, t10 = s10 + 1; /* the multiples of ten around v, over ten */
    int u10in = vbl + out <= s10 * 40;
    int w10in = t10 * 40 + out <= vbr;
    if (u10in != w10in) {
        *k_out = k + 1;
        *more_zeros = 1;
        return u10in ? s10 : t10;
    }
    /* s or t = s + 1: t when s is outside, or when both are inside and t is nearer to v
     * (v against the midpoint 4 s + 2; an exact tie takes the even one). Branch-free: for
     * arbitrary values the outcome is unpredictable. */
    uint64_t s_out = vbl + out > s << 2;
    uint64_t t_in = ((s + 1) << 2) + out <= vbr;
    uint64_t mid = (s << 2) + 2;
    uint64_t t_nearer = (vb > mid) | ((vb == mid) & s);
    *k_out = k;
    *more_zeros = 0;
    return s + (s_out | (t_in & t_nearer & 1));
}

static const char DIGIT_PAIRS[201] = "00010203040506070809"
                                     "10111213141516171819"
                                     "20212223242526272829"
                                     "30313233343536373839"
                                     "40414243444546474849"
                                     "50515253545556575859"
                                     "60616263646566676869"
                                     "70717273747576777879"
                                     "80818283848586878889"
                                     "90919293949596979899";

/* Writes the 8 decimal digits of x < 10^8, leading zeros included, into p[0 .. 8). The four
 * pairs are computed independently of each other. */
static inline void put_digits8(char *p, uint32_t x)
{
    uint32_t hi = x / 10000, lo = x % 10000;
    memcpy(p, DIGIT_PAIRS + 2 * (hi / 100), 2);
    memcpy(p + 2, DIGIT_PAIRS + 2 * (hi % 100), 2);
    memcpy(p + 4, DIGIT_PAIRS + 2 * (lo / 100), 2);
    memcpy(p + 6, DIGIT_PAIRS + 2 * (lo % 100), 2);
}

static const uint64_t POW10_U64[18] = {1U,
                                       10U,
                                       100U,
                                       1000U,
                                       10000U,
                                       100000U,
                                       1000000U,
                                       10000000U,
                                       100000000U,
                                       1000000000U,
                                       10000000000U,
                                       100000000000U,
                                       1000000000000U,
                                       10000000000000U,
                                       100000000000000U,
                                       1000000000000000U,
                                       10000000000000000U,
                                       100000000000000000U};

/* Number of decimal digits of x, 1 <= x < 10^17. */
static inline int digit_count(uint64_t x)
{
    /* floor(log10(2^b)) + 1 for the bit length b, then one correction step */
    int bits = 64 - __builtin_clzll(x);
    int n = ((bits * 1233) >> 12) + 1;
    return n - (x < POW10_U64[n - 1]);
}

/* Writes x < 10^17 as 17 digits, leading zeros included, into dig[0 .. 17). */
static inline void put_digits17(char *dig, uint64_t x)
{
    uint64_t top = x / 10000000000000000U, rest = x % 10000000000000000U;
    dig[0] = (char)('0' + top);
    put_digits8(dig + 1, (uint32_t)(rest / 100000000U));
    put_digits8(dig + 9, (uint32_t)(rest % 100000000U));
}

/* The text is built in a work area around a 17-digit block of the digits (leading zeros
 * included) that ends at DIG_END, with fixed-size stores and copies only: variable-length
 * memcpy/memset calls cost as much as the digit generation. */
#define DIG_END 40
#define AREA_SIZE 72 /* >= DIG_END + 8 + FMT_DOUBLE_MAX_LEN: room for the fixed-size copies */

/* The text of |v| for a finite nonzero v = c 2^q into a[*start .. end); returns end. */
static int put_finite(char *a, int *start, uint64_t c, int q, int irregular)
{
    int k, more_zeros;
    uint64_t d = to_decimal(c, q, irregular, &k, &more_zeros);
    if (more_zeros) { /* strip the remaining trailing zeros: 16 + 8 + 4 + 2 + 1 >= 16 */
        static const int STEP[5] = {16, 8, 4, 2, 1};
        for (int i = 0; i < 5; i++) {
            uint64_t p10 = POW10_U64[STEP[i]];
            uint64_t qt = d / p10;
            int exact = qt * p10 == d;
            d = exact ? qt : d;
            k += exact ? STEP[i] : 0;
        }
    }
    int n = digit_count(d);
    memset(a + DIG_END - 24, '0', 8); /* zeros left of the block, for 0.0000ddd */
    put_digits17(a + DIG_END - 17, d);
    int first = DIG_END - n; /* the first significant digit */
    int e = k + n - 1;       /* its decimal exponent */

    if (e >= -5 && e <= 15) {
        if (e >= n - 1) { /* an integer: the digits, then e - n + 1 zeros */
            memset(a + DIG_END, '0', 16);
            *start = first;
            return DIG_END + e - n + 1;
        }
        if (e >= 0) { /* the point after e + 1 digits: shift the (< 17) others right */
            int point = first + e + 1;
            memmove(a + point + 1, a + point, 16);
            a[point] = '.';
            *start = first;
            return DIG_END + 1;
        }
        /* "0." then -e - 1 zeros (already in place: the block's leading zeros and the
         * memset above) then the digits */
        a[first + e] = '.';
        a[first + e - 1] = '0';
        *start = first + e - 1;
        return DIG_END;
    }
    /* d.ddde+XX: move the first digit left over a point (no point for a single digit) */
    a[first - 1] = a[first];
    a[first] = n > 1 ? '.' : a[first];
    *start = first - (n > 1);
    char *p = a + DIG_END;
    *p++ = 'e';
    *p++ = e < 0 ? '-' : '+';
    unsigned ae = (unsigned)(e < 0 ? -e : e);
    if (ae >= 100) {
        *p++ = (char)('0' + ae / 100);
        ae %= 100;
    }
    memcpy(p, DIGIT_PAIRS + 2 * ae, 2);
    return (int)(p + 2 - a);
}

int fmt_double_shortest(char *buf, size_t len, double v)
{
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    uint64_t frac = bits & ((((uint64_t)1) << 52) - 1);
    int be = (int)((bits >> 52) & 0x7ff);

    char a[AREA_SIZE];
    int start = DIG_END, end;
    if (be == 0x7ff && frac != 0) { /* NaN: empty */
        if (len)
            buf[0] = '\0';
        return 0;
    }
    if (be == 0x7ff) {
        memcpy(a + DIG_END, "inf", 3);
        end = DIG_END + 3;
    } else if (be == 0 && frac == 0) {
        a[DIG_END] = '0';
        end = DIG_END + 1;
    } else if (be == 0) {
        end = put_finite(a, &start, frac, -1074, 0);
    } else {
        end = put_finite(a, &start, frac | ((uint64_t)1 << 52), be - 1075, frac == 0 && be > 1);
    }
    if (bits >> 63)
        a[--start] = '-';
    int n = end - start;
    if (len > FMT_DOUBLE_MAX_LEN) {
        memcpy(buf, a + start, FMT_DOUBLE_MAX_LEN); /* fixed size; bytes past n are scratch */
        buf[n] = '\0';
    } else if (len) {
        size_t m = (size_t)n < len - 1 ? (size_t)n : len - 1;
        memcpy(buf, a + start, m);
        buf[m] = '\0';
    }
    return n;
}

int fmt_double_test_flog10_pow2(int q)
{
    return flog10_pow2(q);
}

int fmt_double_test_flog10_3q_pow2(int q)
{
    return flog10_3q_pow2(q);
}

int fmt_double_test_flog2_pow10(int m)
{
    return flog2_pow10(m);
}

void fmt_double_test_pow10_entry(int m, unsigned long long *hi, unsigned long long *lo)
{
    *hi = POW10_G[m - POW10_MIN][0];
    *lo = POW10_G[m - POW10_MIN][1];
}
