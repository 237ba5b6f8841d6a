"""Full citations of the published methods: one place, used by the model registry, the
analyses and the report builders."""

BAYER_DIACONIS = (
    'D. Bayer and P. Diaconis, "Trailing the dovetail shuffle to its lair", Ann. Appl. '
    "Probab. 2 (1992) 294-313."
)
DIACONIS_SHAHSHAHANI = (
    'P. Diaconis and M. Shahshahani, "Generating a random permutation with random '
    'transpositions", Z. Wahrsch. Verw. Gebiete 57 (1981) 159-179.'
)
ALDOUS_DIACONIS_1986 = (
    'D. Aldous and P. Diaconis, "Shuffling cards and stopping times", Amer. Math. Monthly '
    "93 (1986) 333-348."
)
ALDOUS_DIACONIS_1987 = (
    'D. Aldous and P. Diaconis, "Strong uniform times and finite random walks", Adv. in '
    "Appl. Math. 8 (1987) 69-97."
)
DIACONIS_1988 = (
    "P. Diaconis, Group Representations in Probability and Statistics, Institute of "
    "Mathematical Statistics, Hayward, CA, 1988."
)
CLOPPER_PEARSON = (
    'C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits illustrated '
    'in the case of the binomial", Biometrika 26 (1934) 404-413.'
)
COVER_THOMAS = "T. M. Cover and J. A. Thomas, Elements of Information Theory, 2nd ed., Wiley, 2006."
DIACONIS_GRAHAM = (
    'P. Diaconis and R. Graham, "The analysis of sequential experiments with feedback to '
    'subjects", Ann. Statist. 9 (1981) 3-23.'
)
HOLM = (
    'S. Holm, "A simple sequentially rejective multiple test procedure", Scand. J. Statist. '
    "6 (1979) 65-70."
)
DIACONIS_FULMAN_HOLMES = (
    'P. Diaconis, J. Fulman and S. Holmes, "Analysis of casino shelf shuffling machines", '
    "Ann. Appl. Probab. 23 (2013) 1692-1720."
)
PEMANTLE = (
    'R. Pemantle, "Randomization time for the overhand shuffle", J. Theoret. Probab. 2 '
    "(1989) 37-49."
)
STANLEY = (
    "R. P. Stanley, Enumerative Combinatorics, vol. 1, 2nd ed., Cambridge University Press, 2012."
)
GILBERT_REEDS = (
    'E. N. Gilbert, "Theory of shuffling", Bell Laboratories technical memorandum, 1955; '
    "J. Reeds, unpublished manuscript, 1981 (the Gilbert-Shannon-Reeds riffle)."
)
DIACONIS_GRAHAM_KANTOR = (
    'P. Diaconis, R. L. Graham and W. M. Kantor, "The mathematics of perfect shuffles", '
    "Adv. in Appl. Math. 4 (1983) 175-196."
)
DIACONIS_FILL_PITMAN = (
    'P. Diaconis, J. A. Fill and J. Pitman, "Analysis of top to random shuffles", Combin. '
    "Probab. Comput. 1 (1992) 135-155."
)
WALD_WOLFOWITZ = (
    'A. Wald and J. Wolfowitz, "On a test whether two samples are from the same population", '
    "Ann. Math. Statist. 11 (1940) 147-162."
)
WILKS = (
    'S. S. Wilks, "The large-sample distribution of the likelihood ratio for testing '
    'composite hypotheses", Ann. Math. Statist. 9 (1938) 60-62.'
)
VENZON_MOOLGAVKAR = (
    'D. J. Venzon and S. H. Moolgavkar, "A method for computing profile-likelihood-based '
    'confidence intervals", J. Roy. Statist. Soc. Ser. C 37 (1988) 87-94.'
)
HOPE = (
    'A. C. A. Hope, "A simplified Monte Carlo significance test procedure", J. Roy. Statist. '
    "Soc. Ser. B 30 (1968) 582-598."
)
JENSEN = "J. L. Jensen, Saddlepoint Approximations, Oxford University Press, 1995."
SHAFER_VOVK = (
    "G. Shafer and V. Vovk, Game-Theoretic Foundations for Probability and Finance, Wiley, 2019."
)
WAUDBY_SMITH_RAMDAS = (
    'I. Waudby-Smith and A. Ramdas, "Estimating means of bounded random variables by '
    'betting", J. R. Stat. Soc. B 86 (2024) 1-27.'
)
HOWARD_RAMDAS_MCAULIFFE_SEKHON = (
    'S. R. Howard, A. Ramdas, J. McAuliffe and J. Sekhon, "Time-uniform, nonparametric, '
    'nonasymptotic confidence sequences", Ann. Statist. 49 (2021) 1055-1080.'
)
SHIN_RAMDAS_RINALDO = (
    'J. Shin, A. Ramdas and A. Rinaldo, "E-detectors: a nonparametric framework for '
    'sequential change detection", New England J. Statist. Data Sci. (2024); '
    "arXiv:2203.03532."
)
PAGE = 'E. S. Page, "Continuous inspection schemes", Biometrika 41 (1954) 100-115.'
VILLE = "J. Ville, Etude critique de la notion de collectif, Gauthier-Villars, 1939."
TRADE_PRACTICE = (
    "Common practice of the card trade, no published source: the mechanics are described in "
    "docs/models.md and every parameter is set from what is seen at the table."
)
CONGER_VISWANATH = (
    'M. Conger and D. Viswanath, "Riffle shuffles of decks with repeated cards", Ann. '
    "Probab. 34 (2006) 804-819."
)
ASSAF_DIACONIS_SOUNDARARAJAN = (
    'S. Assaf, P. Diaconis and K. Soundararajan, "A rule of thumb for riffle shuffling", Ann. '
    "Appl. Probab. 21 (2011) 843-875."
)
RIORDAN_1958 = (
    "J. Riordan, An Introduction to Combinatorial Analysis, Wiley, 1958 (rook polynomials)."
)
